"""Kept edges that changed part, for relations with edge parts (a links task's ``link_split``
or an edge task's ``parts``) in both bundles. Kept edges are matched as the counts match them:
by their ends' original IDs (through the vertex index maps); the k-th copy of a repeated pair
on one side is matched with the k-th copy on the other, copies ordered by part."""

from __future__ import annotations

from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill.compare._tables import PART_NAMES, BundleSide, Endpoints

EDGE_PART_KEYS = ("link_split", "parts")


def edge_parts_table(entry: dict[str, Any]) -> str | None:
    """The bundle-relative edge-parts table of a manifest relation entry, if it has one."""
    for key in EDGE_PART_KEYS:
        if entry.get(key):
            return str(entry[key]["table"])
    return None


def edge_part_codes(side: BundleSide, rel: str, count: int) -> np.ndarray:
    """Part code (index into :data:`PART_NAMES`) of each of ``count`` edges; 3 = none."""
    table = side.files.table(rel, columns=["edge", "part"])
    codes = np.full(count, 3, dtype=np.int64)
    found = pc.index_in(table.column("part"), value_set=pa.array(PART_NAMES[:3]))
    codes[table.column("edge").to_numpy()] = pc.fill_null(found, 3).to_numpy()
    return codes


def _numbered(keys: np.ndarray, parts: np.ndarray, spread: int) -> tuple[np.ndarray, np.ndarray]:
    """Keys made unique by numbering repeated copies (ordered by part), sorted; their parts."""
    order = np.lexsort((parts, keys))
    keys, parts = keys[order], parts[order]
    if len(keys) > 1 and bool(np.any(keys[1:] == keys[:-1])):
        starts = np.flatnonzero(np.concatenate([[True], keys[1:] != keys[:-1]]))
        run_start = np.repeat(starts, np.diff(np.append(starts, len(keys))))
        keys = keys * spread + (np.arange(len(keys)) - run_start)
    elif spread > 1:
        keys = keys * spread
    return keys, parts


def _spread(*sides: np.ndarray) -> int:
    """One more than the most copies of one pair on either side (1 when none repeats)."""
    most = 1
    for keys in sides:
        if len(keys):
            most = max(most, int(np.unique(keys, return_counts=True)[1].max()))
    return most if most > 1 else 1


def edge_part_moves(
    ends: tuple[Endpoints, Endpoints],
    parts: tuple[tuple[BundleSide, str], tuple[BundleSide, str]],
    luts: tuple[np.ndarray, np.ndarray],
    new_target_count: int,
) -> dict[str, Any]:
    """``{"changed", "transitions"}`` over the kept edges of one relation, like the vertices'
    ``part_moves``; ``ends`` are the old and new endpoints, ``parts`` each side and its
    edge-parts table; ``luts`` map old source / target indices to new ones (-1: removed)."""
    (old_s, old_t), (new_s, new_t) = ends
    old_codes = edge_part_codes(*parts[0], len(old_s))
    new_codes = edge_part_codes(*parts[1], len(new_s))
    width = max(new_target_count, 1)
    mapped_s, mapped_t = luts[0][old_s], luts[1][old_t]
    alive = (mapped_s >= 0) & (mapped_t >= 0)
    old_keys = (mapped_s * width + mapped_t)[alive]
    new_keys = new_s * width + new_t
    spread = _spread(old_keys, new_keys)
    a_keys, a_parts = _numbered(old_keys, old_codes[alive], spread)
    b_keys, b_parts = _numbered(new_keys, new_codes, spread)
    _, ia, ib = np.intersect1d(a_keys, b_keys, assume_unique=True, return_indices=True)
    pairs = np.bincount(a_parts[ia] * 4 + b_parts[ib], minlength=16)
    found = [int(k) for k in np.flatnonzero(pairs)]
    transitions = [
        {"from": PART_NAMES[k // 4], "to": PART_NAMES[k % 4], "count": int(pairs[k])} for k in found
    ]
    changed = sum(int(pairs[k]) for k in found if k // 4 != k % 4)
    return {"changed": changed, "transitions": transitions}
