"""Term tables (answers to the unit queries) -> snapshot pages.

Both RDF sources answer each unit with a term table shaped like the SELECT of
:func:`~graphmill.connectors.rdf._queries.unit_query`; this module turns it into pages:

* membership -> ``vertex_id``; under ``reject`` any bound ``?clash`` is an InputError naming
  the smallest such subject;
* property facet -> ``vertex_id`` + the property, typed per :mod:`._xsd`. The column type is
  chosen for the whole unit: one kind keeps its type, integer + float give float64, any other
  mix gives strings rendered as the snapshot renders typed columns (so the result does not
  depend on page boundaries). Values equal as values (``"01"`` and ``"1"`` as xsd:integer)
  are kept once per vertex, so every store gives the same sets: by the snapshot, from each
  row's ``Page.identity`` (rows of a vertex may come on several pages, in any order);
* graph facet -> the graph name as a string; relation -> ``source_id``, ``target_id``.

Each page reports its property's value kinds, ``ill-typed`` included.
"""

from __future__ import annotations

from collections.abc import Iterator

import pyarrow as pa
import pyarrow.compute as pc

from graphmill._columns import KIND_TO_ARROW, conform
from graphmill.connectors._declared import accepted_kinds
from graphmill.connectors.base import (
    IDENTITY_PREFIX,
    RAW_PREFIX,
    SOURCE_ID,
    TARGET_ID,
    VERTEX_ID,
    Page,
    WorkUnit,
)
from graphmill.connectors.rdf._plan import RdfPlan
from graphmill.connectors.rdf._queries import CLASH, SOURCE, TARGET, VALUE, VERTEX
from graphmill.connectors.rdf._xsd import ILL_TYPED, XSD_STRING, LiteralValues, literal_values
from graphmill.errors import InputError

DEFAULT_PAGE_ROWS = 100_000
_NUMERIC = {"integer", "float"}


def language_mask(
    lang: pa.Array, datatype: pa.Array, languages: tuple[str, ...] | None
) -> pa.Array:
    """Which literals ``rdf.languages`` keeps: tagged ones whose tag is listed (ignoring case),
    untagged xsd:string ones if ``""`` is listed, and every other literal."""
    if languages is None:
        return pa.array([True] * len(lang), pa.bool_())
    tags = pa.array([t for t in languages if t], pa.string())
    tagged = pc.greater(pc.utf8_length(lang), 0)
    tag_ok = pc.is_in(pc.utf8_lower(lang), value_set=tags)
    untagged_ok = pc.not_equal(datatype, XSD_STRING) if "" not in languages else pc.equal(lang, "")
    return pc.fill_null(pc.if_else(tagged, tag_ok, untagged_ok), False)


def _column(terms: pa.Table, name: str) -> pa.Array:
    return terms.column(name).combine_chunks()


def _check_clashes(terms: pa.Table, plan: RdfPlan, vertex_type: str) -> None:
    if CLASH not in terms.column_names:
        return
    clash = _column(terms, CLASH)
    if clash.null_count == len(clash):
        return
    rows = terms.filter(pc.is_valid(clash))
    subject = pc.min(_column(rows, VERTEX)).as_py()
    other = pc.min(_column(rows.filter(pc.equal(_column(rows, VERTEX), subject)), CLASH)).as_py()
    other_type = next(t for t in plan.type_names if t != vertex_type and plan.classes[t] == other)
    raise InputError(
        f"the subject has the classes <{plan.classes[vertex_type]}> and <{other}> of the "
        f"vertex types {vertex_type!r} and {other_type!r}, and rdf.several_types is 'reject' "
        f"({len(pc.unique(_column(rows, VERTEX)))} subjects in {vertex_type!r} are like this)",
        record=subject,
        hint="give it one declared class, or set rdf.several_types to first-declared or every-type",
    )


def _present(read: LiteralValues) -> set[str]:
    return {k for k in read.values if k in pc.unique(read.kinds).to_pylist()}


def present_kinds(lexical: pa.Array, datatype: pa.Array) -> set[str]:
    """The value kinds with at least one well-typed literal among ``lexical``/``datatype``."""
    return _present(literal_values(lexical, datatype))


def typed_values(
    lexical: pa.Array,
    datatype: pa.Array,
    lang: pa.Array | None = None,
    declared: str | None = None,
    *,
    present: set[str] | None = None,
) -> tuple[pa.Array, pa.Array, pa.Array]:
    """(values, kinds, identity) of literals, with one column type for all (module doc).

    ``identity`` is a string equal for equal values of one kind, used to drop repeats. A
    ``declared`` kind applies the gate of :mod:`graphmill.connectors._declared`: literals of
    other kinds become ``ill-typed`` (null); under ``string`` every literal is its lexical form.
    ``present`` (default: those of these literals) are the kinds the column type is chosen
    for, so that a unit read in batches gets one type (see :func:`present_kinds`); a declared
    kind fixes the column type by itself.
    """
    read = _declared_read(literal_values(lexical, datatype), lexical, declared)
    lang = pa.nulls(len(lexical), pa.string()) if lang is None else lang
    if declared is not None and declared in KIND_TO_ARROW:
        present = {declared}  # a declared kind fixes the column type, in every batch
    elif present is None:
        present = _present(read)
    else:  # kinds seen elsewhere in the unit: null here
        present = set(present)
        missing = {k: pa.nulls(len(lexical), KIND_TO_ARROW[k]) for k in present - set(read.values)}
        read = LiteralValues(kinds=read.kinds, values={**read.values, **missing})
    rendered = {k: conform(v, pa.string()) for k, v in read.values.items()}
    # Strings are equal only with equal datatype and language tag (RDF 1.1 Concepts, 3.3);
    # ill-typed literals only as terms; typed values by value.
    as_term = pc.binary_join_element_wise(datatype, pc.fill_null(lang, ""), lexical, " ")
    by_value = [v for k, v in rendered.items() if k != "string"]
    identity = pc.coalesce(*by_value, as_term)
    if not present:
        values: pa.Array = pa.nulls(len(lexical))
    elif len(present) == 1:
        values = read.values[present.pop()]
    elif present <= _NUMERIC:
        values = pc.coalesce(*(read.values[k].cast(pa.float64()) for k in sorted(present)))
    else:
        values = pc.coalesce(*(rendered[k] for k in sorted(present)))
    return values, read.kinds, identity


def _declared_read(read: LiteralValues, lexical: pa.Array, declared: str | None) -> LiteralValues:
    """``read`` under a declared kind (see :func:`typed_values`)."""
    if declared is None or declared not in KIND_TO_ARROW:
        return read
    lexical = lexical.combine_chunks() if isinstance(lexical, pa.ChunkedArray) else lexical
    if declared == "string":
        kinds = pc.if_else(pc.is_valid(read.kinds), "string", pa.scalar(None, pa.string()))
        text = pc.if_else(pc.is_valid(kinds), lexical, pa.scalar(None, pa.string()))
        return LiteralValues(kinds, {"string": text})
    accepted = accepted_kinds(declared)
    ok = pc.fill_null(pc.is_in(read.kinds, value_set=pa.array(sorted(accepted))), False)
    kinds = pc.if_else(ok, read.kinds, pc.if_else(pc.is_valid(read.kinds), ILL_TYPED, None))
    target = KIND_TO_ARROW[declared]
    kept = [read.values[k].cast(target) for k in sorted(accepted) if k in read.values]
    values = pc.coalesce(*kept) if kept else pa.nulls(len(lexical), target)
    return LiteralValues(kinds, {declared: pc.if_else(ok, values, pa.scalar(None, target))})


def ill_typed_raw(lexical: pa.Array, kinds: pa.Array) -> pa.Array:
    """The lexical form of ill-typed literals, null for the others."""
    return pc.if_else(pc.equal(kinds, ILL_TYPED), lexical, pa.scalar(None, pa.string()))


def unit_table(
    plan: RdfPlan, unit: WorkUnit, terms: pa.Table, *, present: set[str] | None = None
) -> tuple[pa.Table, pa.Array | None]:
    """The unit's rows in the snapshot convention, and each row's value kind (facets only);
    ``present`` as for :func:`typed_values`."""
    if unit.table == "edges":
        table = pa.table({SOURCE_ID: _column(terms, SOURCE), TARGET_ID: _column(terms, TARGET)})
        return table, None
    ids = _column(terms, VERTEX)
    if unit.facet is None:
        _check_clashes(terms, plan, unit.name)
        return pa.table({VERTEX_ID: pc.unique(ids)}), None
    if unit.facet == plan.graph_property:
        graph = _column(terms, VALUE)
        return pa.table({VERTEX_ID: ids, unit.facet: graph}), pc.if_else(
            pc.is_valid(graph), "string", pa.scalar(None, pa.string())
        )
    lexical = _column(terms, VALUE)
    declared = plan.kinds.get((unit.name, unit.facet))
    values, kinds, identity = typed_values(
        lexical,
        _column(terms, VALUE + "_datatype"),
        _column(terms, VALUE + "_lang"),
        declared,
        present=present,
    )
    table = pa.table(
        {
            VERTEX_ID: ids,
            unit.facet: values,
            RAW_PREFIX + unit.facet: ill_typed_raw(lexical, kinds),
            IDENTITY_PREFIX + unit.facet: pc.binary_join_element_wise(
                pc.fill_null(kinds, ""), identity, "\x1f"
            ),
        }
    )
    return table, kinds


def _kind_counts(kinds: pa.Array) -> dict[str, int]:
    counts = pc.value_counts(kinds.drop_null())
    return dict(
        sorted(
            zip(counts.field("values").to_pylist(), counts.field("counts").to_pylist(), strict=True)
        )
    )


def unit_pages(
    plan: RdfPlan,
    unit: WorkUnit,
    terms: pa.Table,
    *,
    page_rows: int = DEFAULT_PAGE_ROWS,
    present: set[str] | None = None,
) -> Iterator[Page]:
    """Pages of at most ``page_rows`` rows for ``unit``; facet pages carry their value kinds.

    ``terms`` may be one batch of a unit read in batches: then pass the unit's ``present``
    kinds. Values equal as values are made distinct per subject by the snapshot merge, from
    each facet page's ``identity``."""
    table, kinds = unit_table(plan, unit, terms, present=present)
    table = table.combine_chunks()
    for start in range(0, table.num_rows, page_rows):
        batch = table.slice(start, page_rows).to_batches()[0]
        value_kinds, raw = None, None
        if kinds is not None and unit.facet is not None:
            value_kinds = {unit.facet: _kind_counts(kinds.slice(start, page_rows))}
        name = RAW_PREFIX + (unit.facet or "")
        if name in batch.schema.names:  # the text of ill-typed literals goes beside the page
            raw = {unit.facet or "": batch.column(name)}
            batch = batch.drop_columns([name])
        identity = None
        name = IDENTITY_PREFIX + (unit.facet or "")
        if name in batch.schema.names:  # for the snapshot to drop repeats across pages
            identity = {unit.facet or "": batch.column(name)}
            batch = batch.drop_columns([name])
        yield Page(batch=batch, value_kinds=value_kinds, raw=raw, identity=identity)


__all__ = ["ILL_TYPED", "language_mask", "typed_values", "unit_pages", "unit_table"]
