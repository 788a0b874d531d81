"""Unit answers computed with Arrow from a table of quads (the ``rdf-file`` engine).

:class:`FactTable` holds the quads a spec can use (``rdf:type`` with a declared class, and
the declared predicates) and answers each work unit with the same term table the unit's
SPARQL query gives on a store holding those quads -- an independent implementation of the
semantics in :mod:`._queries`, so the two sources can be checked against each other.
"""

from __future__ import annotations

import pyarrow as pa
import pyarrow.compute as pc

from graphmill.connectors.base import WorkUnit
from graphmill.connectors.rdf._mapping import language_mask
from graphmill.connectors.rdf._plan import RDF_TYPE, RdfPlan
from graphmill.connectors.rdf._queries import CLASH, SOURCE, TARGET, VALUE, VERTEX
from graphmill.connectors.rdf._terms import TERM_SUFFIXES

_NULL = pa.scalar(None, pa.string())


def wanted_predicates(plan: RdfPlan) -> list[str]:
    """Predicates whose quads the spec can use."""
    found = [RDF_TYPE, *plan.predicates.values(), *(p for _, p in plan.relations.values())]
    return list(dict.fromkeys(found))


def _distinct(table: pa.Table) -> pa.Table:
    return table.group_by(table.column_names, use_threads=False).aggregate([])


def _terms(name: str, table: pa.Table, prefix: str) -> dict[str, pa.ChunkedArray]:
    """The term columns ``prefix*`` of ``table`` renamed to ``name*``."""
    return {name + sfx: table.column(prefix + sfx) for sfx in TERM_SUFFIXES}


class FactTable:
    """Quads (columns of :func:`~graphmill.connectors.rdf._terms.read_nquads`) for one plan."""

    def __init__(self, quads: pa.Table, plan: RdfPlan) -> None:
        self.plan = plan
        self.quads = quads
        self.merged = self._select_graphs(quads).drop_columns([f"g{s}" for s in TERM_SUFFIXES])
        is_type = pc.and_(
            pc.equal(self.merged.column("p"), RDF_TYPE),
            pc.equal(self.merged.column("o_kind"), "iri"),
        )
        self.types = _distinct(self.merged.filter(is_type).select(["s", "o"]))

    def _select_graphs(self, quads: pa.Table) -> pa.Table:
        graphs = self.plan.graphs
        if graphs == "union":
            return quads
        if graphs == "default":
            return quads.filter(pc.is_null(quads.column("g")))
        return quads.filter(
            pc.fill_null(pc.is_in(quads.column("g"), value_set=pa.array(graphs)), False)
        )

    def subjects_of(self, classes: tuple[str, ...] | list[str]) -> pa.Array:
        """Subjects with an ``rdf:type`` triple naming one of ``classes``."""
        rows = self.types.filter(
            pc.is_in(self.types.column("o"), value_set=pa.array(list(classes), pa.string()))
        )
        return pc.unique(rows.column("s").combine_chunks())

    def members(self, vertex_type: str) -> pa.Array:
        """Subjects of ``vertex_type`` under ``rdf.several_types`` (reject acts as every-type)."""
        own = self.subjects_of([self.plan.classes[vertex_type]])
        earlier = self.plan.earlier_classes(vertex_type)
        if self.plan.several_types == "first-declared" and earlier:
            own = own.filter(pc.invert(pc.is_in(own, value_set=self.subjects_of(earlier))))
        return own

    def _with_subject_in(self, predicate: str, subjects: pa.Array) -> pa.Table:
        rows = self.merged.filter(pc.equal(self.merged.column("p"), predicate))
        return rows.filter(pc.is_in(rows.column("s"), value_set=subjects))

    def unit_terms(self, unit: WorkUnit) -> pa.Table:
        """The term table :func:`~graphmill.connectors.rdf._queries.unit_query` would give."""
        plan = self.plan
        if unit.table == "edges":
            source_type, predicate = plan.relations[unit.name]
            rows = self._with_subject_in(predicate, self.members(source_type))
            rows = rows.filter(pc.not_equal(rows.column("o_kind"), "literal"))
            return _distinct(pa.table({SOURCE: rows.column("s"), TARGET: rows.column("o")}))
        if unit.facet is None:
            return self._membership(unit.name)
        if unit.facet == plan.graph_property:
            return self._graph_facet(unit.name)
        predicate = plan.predicates[(unit.name, unit.facet)]
        rows = self._with_subject_in(predicate, self.members(unit.name))
        rows = rows.filter(pc.equal(rows.column("o_kind"), "literal"))
        keep = language_mask(
            rows.column("o_lang").combine_chunks(),
            rows.column("o_datatype").combine_chunks(),
            plan.languages,
        )
        rows = rows.filter(keep)
        facts = {VERTEX: rows.column("s"), **_terms(VALUE, rows, "o")}
        return _distinct(pa.table(facts).drop_columns([VALUE + "_kind"]))

    def _membership(self, vertex_type: str) -> pa.Table:
        members = self.members(vertex_type)
        table = pa.table({VERTEX: members})
        others = self.plan.other_classes(vertex_type)
        if self.plan.several_types != "reject" or not others:
            return table
        clashes = self.types.filter(
            pc.is_in(self.types.column("o"), value_set=pa.array(others, pa.string()))
        )
        clashes = clashes.filter(pc.is_in(clashes.column("s"), value_set=members))
        clashes = clashes.rename_columns([VERTEX, CLASH])
        clean = members.filter(pc.invert(pc.is_in(members, value_set=clashes.column(VERTEX))))
        return pa.concat_tables(
            [clashes, pa.table({VERTEX: clean, CLASH: pa.nulls(len(clean), pa.string())})]
        )

    def _graph_facet(self, vertex_type: str) -> pa.Table:
        quads = self._select_graphs(self.quads)
        wanted = pc.and_(
            pc.equal(quads.column("p"), RDF_TYPE),
            pc.equal(quads.column("o"), self.plan.classes[vertex_type]),
        )
        rows = quads.filter(pc.and_(wanted, pc.equal(quads.column("o_kind"), "iri")))
        rows = rows.filter(pc.is_in(rows.column("s"), value_set=self.members(vertex_type)))
        graph = pc.fill_null(rows.column("g"), "")
        return _distinct(pa.table({VERTEX: rows.column("s"), VALUE: graph}))
