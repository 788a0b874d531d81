"""Vertex structure checks: duplicate and shared IDs, isolated vertices, edgeless types.

Each check takes the context and a subject and returns an :class:`Outcome`.
"""

from __future__ import annotations

from pathlib import Path

import pyarrow as pa
import pyarrow.compute as pc

from graphmill._text import plural
from graphmill.connectors.base import VERTEX_ID
from graphmill.validate._context import CheckContext, Outcome, counted, share


def _sides(ctx: CheckContext, vertex_type: str) -> list[tuple[pa.Table | Path, str]]:
    """The edge tables and sides of every relation where ``vertex_type`` stands."""
    sides = []
    for rel in ctx.relations:
        if rel.source_type == vertex_type:
            sides.append((ctx.edge_input(rel), "source"))
        if rel.target_type == vertex_type:
            sides.append((ctx.edge_input(rel), "target"))
    return sides


def check_duplicate_vertex_id(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Vertex rows beyond the first for each id (count = extra copies)."""
    name = subject["vertex_type"]
    ids = ctx.vertices(name).column(VERTEX_ID)
    found = ctx.engine.duplicate_vertex_ids(ids, ctx.sample_size)
    extra, repeated = found.count, found.details["ids"]
    return Outcome(
        extra,
        len(ids),
        f"{counted(repeated, 'vertex id')} of {name} occur more than once "
        f"({counted(extra, 'extra row')} of {len(ids)}); make the ids unique in the source",
        found.sample,
        {"ids": repeated},
    )


def check_shared_ids(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """IDs used by vertices of more than one type (count = such ids)."""
    ids = {t: ctx.vertices(t).column(VERTEX_ID) for t in ctx.vertex_types}
    found = ctx.engine.shared_vertex_ids(ids, ctx.sample_size)
    sample, total = found.sample, found.details["total"]
    picked = pa.array([r[VERTEX_ID] for r in sample], pa.string())
    holders = {t: pc.is_in(picked, value_set=c).to_pylist() for t, c in ids.items()}
    for i, record in enumerate(sample):
        record["vertex_types"] = sorted(t for t, flags in holders.items() if flags[i])
    return Outcome(
        found.count,
        total,
        f"{found.count} of {total} vertex ids are used by vertices of several types; "
        "each names a different vertex in each type, so check that this is intended",
        sample,
    )


def check_isolated_vertex(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Vertices with no edge in any relation (count = distinct ids)."""
    name = subject["vertex_type"]
    ids = ctx.vertices(name).column(VERTEX_ID)
    found = ctx.engine.isolated_vertices(ids, _sides(ctx, name), ctx.sample_size)
    count, total = found.count, found.details["total"]
    return Outcome(
        count,
        total,
        f"{count} of {total} {name} vertices ({share(count, total)}) have no "
        "edge in any declared relation",
        found.sample,
    )


def check_edgeless_type(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """A vertex type that no relation with at least one edge touches (count 0 or 1)."""
    name = subject["vertex_type"]
    touching = [r for r in ctx.relations if name in (r.source_type, r.target_type)]
    with_edges = [r for r in touching if ctx.rows("edges", r.dotted)]
    rows = ctx.vertices(name).num_rows
    declared = ", ".join(r.dotted for r in touching) or "none"
    return Outcome(
        0 if with_edges else 1,
        1,
        f"vertex type {name} ({plural(rows, 'vertex', 'vertices')}) is in no relation that has "
        "edges "
        f"(relations declared for it: {declared})",
        details={"relations": [r.dotted for r in touching], "vertices": rows},
    )
