"""The plan: every set operation of pull, check and build, named, with its contract.

Each :class:`Operation` names its inputs and outputs as Arrow schemas and states its
contract in one paragraph. An engine (``graphmill.engine.reference``, ``graphmill.engine.local``,
later a Spark engine) implements the operations as methods of :class:`~graphmill.engine.Engine`;
whatever the engine, the results are equal value for value, so snapshots, reports and bundles
are byte-identical. Two rules hold for every operation:

* **Order.** Strings compare by their UTF-8 bytes (code point order), never by a locale or
  collation; numbers numerically, with ``-0.0 == 0.0``; NaN after every number and null after
  NaN. Ties keep the input's row order (stable), so an ordering is a function of the input.
* **Samples.** A sample of offenders is the ``k`` smallest *distinct* records, ordered by
  every column in turn under the rule above.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import pyarrow as pa

ID = pa.string()
POSITION = pa.int64()


def _schema(*fields: tuple[str, pa.DataType]) -> pa.Schema:
    return pa.schema([pa.field(name, kind, nullable=False) for name, kind in fields])


#: A table's rows, some of whose columns are ordering keys (any Arrow types).
ROWS = pa.schema([])
#: Vertex IDs of one type, possibly repeated (duplicate rows are a defect the checks report).
VERTEX_IDS = _schema(("vertex_id", ID))
#: An edge table's endpoint IDs (property columns may follow).
EDGE_IDS = _schema(("source_id", ID), ("target_id", ID))
#: Row positions (a permutation or a selection of rows), or ``-1`` for "no such vertex".
POSITIONS = _schema(("position", POSITION))
#: Mapped edges: endpoint indices and the snapshot row each edge came from.
MAPPED_EDGES = _schema(("source", POSITION), ("target", POSITION), ("row", POSITION))
#: Edges after the policies, sorted by (source, target), with merged copies counted.
POLICED_EDGES = pa.schema([*MAPPED_EDGES, pa.field("multiplicity", POSITION, nullable=True)])
#: A count and its details (named integers), plus a sample of offending records.
FINDING = pa.schema(
    [pa.field("count", POSITION, nullable=False), pa.field("details", pa.map_(ID, POSITION))]
)


@dataclass(frozen=True)
class Operation:
    """One named set operation of the plan."""

    name: str
    stage: str  # pull | check | build
    inputs: dict[str, pa.Schema]
    outputs: dict[str, pa.Schema]
    contract: str
    method: str  # the Engine method implementing it


@dataclass(frozen=True)
class Offenders:
    """What a check operation found: the count, named details, the sorted sample."""

    count: int
    sample: list[dict[str, Any]]
    details: dict[str, int] = field(default_factory=dict)


def _op(name: str, stage: str, method: str, inputs: Any, outputs: Any, contract: str) -> Operation:
    return Operation(name, stage, dict(inputs), dict(outputs), " ".join(contract.split()), method)


OPERATIONS: dict[str, Operation] = {
    op.name: op
    for op in [
        _op(
            "canonical-order",
            "pull",
            "canonical_order",
            {"rows": ROWS},
            {"order": POSITIONS},
            """The permutation that sorts a staged table by its key columns in turn (every
            column but list columns), ascending, stable. The snapshot's merge applies it, so
            a snapshot table's row order depends only on its set of rows.""",
        ),
        _op(
            "canonical-merge",
            "pull",
            "sorted_parts",
            {"parts": ROWS},
            {"rows": ROWS},
            """The rows of staged Parquet parts that share one schema, in the order of
            ``canonical-order`` over the parts' rows taken in turn (ties keep that order),
            streamed as record batches, so that the snapshot's writer cuts the same row groups
            whatever the engine. The parts may instead be input files read through
            ``FileScan`` s (columns cast, empty text as null where asked, rows selected by a
            text column): the same rows the staged route gives, with no staged copy.""",
        ),
        _op(
            "vertex-index",
            "build",
            "first_rows_by_id",
            {"ids": VERTEX_IDS},
            {"rows": POSITIONS},
            """The position of the first row of each distinct ID, ordered by ID bytes: row
            ``i`` of the result becomes the vertex with index ``i``; later rows with the same
            ID are dropped (and counted by the caller).""",
        ),
        _op(
            "endpoint-index",
            "build",
            "endpoint_positions",
            {"endpoints": VERTEX_IDS, "vertices": VERTEX_IDS},
            {"positions": POSITIONS},
            """For each endpoint ID, its position among the (distinct, index-ordered) vertex
            IDs, or -1 when it is not a vertex of that type (a dangling endpoint).""",
        ),
        _op(
            "edge-policy",
            "build",
            "edge_policy",
            {"edges": MAPPED_EDGES},
            {"edges": POLICED_EDGES},
            """Drop dangling edges (counted as dangling-both, -source, -target); drop
            self-loops if asked; symmetrize (add (v, u) for each (u, v) whose reverse pair is
            absent, carrying u->v's row); resolve repeated pairs (keep all, keep the first,
            or merge into a multiplicity); sort stably by (source, target), originals before
            added reverses, then by row.""",
        ),
        _op(
            "mapped-edges",
            "build",
            "mapped_edges",
            {"edges": EDGE_IDS, "sources": VERTEX_IDS, "targets": VERTEX_IDS},
            {"edges": POLICED_EDGES},
            """``endpoint-index`` for both sides of an edge table, then ``edge-policy`` on the
            mapped edges, in one go, so that an engine can map and police without handing
            the positions back in between.""",
        ),
        _op(
            "dangling-edges",
            "check",
            "dangling_edges",
            {"edges": EDGE_IDS, "sources": VERTEX_IDS, "targets": VERTEX_IDS},
            {"finding": FINDING},
            """Edge rows with an endpoint that is not among the vertex IDs of its side:
            count, details source_side and target_side, sample records (source_id,
            target_id, missing) with missing in both | source | target.""",
        ),
        _op(
            "self-loops",
            "check",
            "self_loops",
            {"edges": EDGE_IDS},
            {"finding": FINDING},
            """Edge rows whose source ID equals their target ID; sample (source_id,
            target_id).""",
        ),
        _op(
            "repeated-edges",
            "check",
            "repeated_edges",
            {"edges": EDGE_IDS},
            {"finding": FINDING},
            """Rows equal in every column to another row: count = extra copies, details
            repeated_edges = distinct repeated rows; sample (source_id, target_id, copies).""",
        ),
        _op(
            "parallel-edges",
            "check",
            "parallel_edges",
            {"edges": EDGE_IDS},
            {"finding": FINDING},
            """Pairs joined by distinct rows that differ in properties: count = distinct rows
            beyond the first per pair, details pairs; sample (source_id, target_id,
            variants).""",
        ),
        _op(
            "reciprocity",
            "check",
            "reciprocity",
            {"edges": EDGE_IDS},
            {"finding": FINDING},
            """Over distinct (source, target) pairs: count = pairs other than self-loops
            whose reverse pair is present, details pairs = distinct pairs (as
            networkx.overall_reciprocity on a DiGraph).""",
        ),
        _op(
            "one-way-edges",
            "check",
            "one_way_edges",
            {"edges": EDGE_IDS},
            {"finding": FINDING},
            """Edge rows whose reverse pair is absent (a self-loop is its own reverse):
            count, details pairs = distinct such pairs; sample (source_id, target_id).""",
        ),
        _op(
            "isolated-vertices",
            "check",
            "isolated_vertices",
            {"vertices": VERTEX_IDS, "endpoints": VERTEX_IDS},
            {"finding": FINDING},
            """Distinct vertex IDs that are none of the endpoint IDs (of every relation, on
            the sides where the type stands): count, details total = distinct IDs; sample
            (vertex_id).""",
        ),
        _op(
            "duplicate-vertex-ids",
            "check",
            "duplicate_vertex_ids",
            {"vertices": VERTEX_IDS},
            {"finding": FINDING},
            """IDs of one vertex type held by more than one row: count = rows beyond the
            first of each such ID, details ids = such IDs; sample (vertex_id, copies).""",
        ),
        _op(
            "shared-vertex-ids",
            "check",
            "shared_vertex_ids",
            {"vertices": VERTEX_IDS},
            {"finding": FINDING},
            """Given the IDs of every vertex type: distinct IDs held by more than one type:
            count = such IDs, details total = distinct IDs over every type; sample
            (vertex_id).""",
        ),
    ]
}

#: Operations every engine runs on the reference code for now (numpy, seeded or small):
#: encoder statistics (standardize, min-max, log, categories), splits (PCG64 draws),
#: pseudonyms (keyed hashes), the property and contract checks.
REFERENCE_ONLY = (
    "encoder-statistics",
    "splits",
    "pseudonyms",
    "property-checks",
    "contract-checks",
)
