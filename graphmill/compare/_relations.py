"""One relation's entry in a comparison: counts of edges kept, added and removed, degree
drift, and the kept edges that changed part."""

from __future__ import annotations

from typing import Any

from graphmill.compare._drift import degree_drift
from graphmill.compare._edge_moves import edge_part_moves, edge_parts_table
from graphmill.compare._tables import BundleSide, VertexMatch, compare_edges, endpoints


def whole(status: str, old: int, new: int) -> dict[str, Any]:
    """Counts of a type or relation only one side has: all added or all removed."""
    return {"status": status, "old": old, "new": new, "kept": 0, "added": new, "removed": old}


def one_side_relation(old: BundleSide, new: BundleSide, dotted: str) -> dict[str, Any]:
    in_old = dotted in old.manifest["relations"]
    count = (old if in_old else new).manifest["relations"][dotted]["count"]
    status = "only-old" if in_old else "only-new"
    return {
        **whole(status, count if in_old else 0, 0 if in_old else count),
        "degree": {},
        "part_moves": None,
    }


def bundle_relation(
    old: BundleSide, new: BundleSide, dotted: str, matches: dict[str, VertexMatch]
) -> dict[str, Any]:
    in_old, in_new = dotted in old.manifest["relations"], dotted in new.manifest["relations"]
    if not (in_old and in_new):
        return one_side_relation(old, new, dotted)
    entry = new.manifest["relations"][dotted]
    src, dst = matches[entry["source_type"]], matches[entry["target_type"]]
    ends = endpoints(old, old.edge_file(dotted)), endpoints(new, new.edge_file(dotted))
    result = compare_edges(
        *ends,
        src.lookup(),
        dst.lookup(),
        (src.old_count, src.new_count, dst.old_count, dst.new_count),
    )
    old_table = edge_parts_table(old.manifest["relations"][dotted])
    new_table = edge_parts_table(entry)
    moves = None
    if old_table and new_table:
        moves = edge_part_moves(
            ends,
            ((old, old_table), (new, new_table)),
            (src.lookup(), dst.lookup()),
            dst.new_count,
        )
    return {
        "status": "both",
        "old": result.old,
        "new": result.new,
        "kept": result.kept,
        "added": result.added,
        "removed": result.removed,
        "degree": {
            "out": degree_drift(result.old_out, result.new_out),
            "in": degree_drift(result.old_in, result.new_in),
        },
        "part_moves": moves,
    }
