"""The predicates an RDF dump holds for a vertex type's subjects (for did-you-mean hints).

Asked by ``rdf-file`` only when a declared property had no value at all: the dumps are
parsed once more, and only subjects, predicates and ``rdf:type`` objects are looked at.
"""

from __future__ import annotations

import itertools

import pyarrow as pa
import pyarrow.compute as pc

from graphmill.connectors.rdf._files import oxigraph, quads, reading, spec_inputs
from graphmill.connectors.rdf._plan import RDF_TYPE, RdfPlan
from graphmill.connectors.rdf._queries import KEYS_LIMIT
from graphmill.connectors.rdf._terms import read_nquads
from graphmill.spec import PipelineSpec

_CHUNK = 250_000


def predicates_of(spec: PipelineSpec, plan: RdfPlan, vertex_type: str) -> list[str]:
    """Distinct predicates of subjects typed with ``vertex_type``'s class (at most
    ``KEYS_LIMIT``, sorted), in the graphs the spec reads."""
    ox = oxigraph()
    members: list[pa.Array] = []
    pairs: list[pa.Table] = []
    for item in spec_inputs(spec):
        with quads(item) as parser, reading(item):
            while block := ox.serialize(
                itertools.islice(parser, _CHUNK), format=ox.RdfFormat.N_QUADS
            ):
                table = _in_graphs(read_nquads(block), plan)
                typed = pc.and_(
                    pc.equal(table.column("p"), RDF_TYPE),
                    pc.equal(table.column("o"), plan.classes[vertex_type]),
                )
                subjects = table.column("s").filter(pc.fill_null(typed, False))
                members.append(subjects.combine_chunks())
                pairs.append(table.select(["s", "p"]).group_by(["s", "p"]).aggregate([]))
    if not pairs:
        return []
    subjects = pc.unique(pa.concat_arrays(members)) if members else pa.array([], pa.string())
    found = pa.concat_tables(pairs)
    found = found.filter(pc.is_in(found.column("s"), value_set=subjects))
    return sorted(pc.unique(found.column("p")).to_pylist())[:KEYS_LIMIT]


def _in_graphs(table: pa.Table, plan: RdfPlan) -> pa.Table:
    """The quads of the graphs the spec reads (``rdf.graphs``)."""
    if plan.graphs == "union":
        return table
    if plan.graphs == "default":
        return table.filter(pc.is_null(table.column("g")))
    wanted = pa.array(list(plan.graphs), pa.string())
    return table.filter(pc.fill_null(pc.is_in(table.column("g"), value_set=wanted), False))
