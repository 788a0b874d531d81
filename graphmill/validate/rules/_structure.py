"""Vertex-level structure rules as pure functions over Arrow ID columns.

Inputs are string arrays (``pa.Array`` or ``pa.ChunkedArray``) of original IDs; outputs are
boolean masks (one entry per input row) or small tables. Nothing here reads files or keeps
state, so another engine can implement the same contracts and be compared with these
result for result. Where an endpoint column is already coded (:class:`PairCodes` from
``_pairs.py``), passing it lets a rule work on the dictionary of distinct IDs instead of
hashing every row again; the result is the same.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import TypeAlias

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill.validate.rules._pairs import Column, PairCodes

Side: TypeAlias = tuple[PairCodes, str]  # coded endpoints and the side used: "source" or "target"


def _flat(column: Column) -> pa.Array:
    return column.combine_chunks() if isinstance(column, pa.ChunkedArray) else column


def _codes_of(side: Side) -> np.ndarray:
    codes, which = side
    return codes.source if which == "source" else codes.target


def dangling_mask(
    endpoint_ids: Column, vertex_ids: Column, *, coded: Side | None = None
) -> pa.BooleanArray:
    """True where an endpoint is not among ``vertex_ids``.

    ``coded``: the same endpoint column as (pair codes, side), to test each distinct ID once.
    """
    if coded is None:
        return pc.invert(pc.is_in(_flat(endpoint_ids), value_set=_flat(vertex_ids)))
    known = pc.is_in(coded[0].dictionary, value_set=_flat(vertex_ids))
    return pa.array(~known.to_numpy(zero_copy_only=False)[_codes_of(coded)])


def duplicate_counts(ids: Column) -> pa.Table:
    """Values that occur more than once: columns ``value`` and ``copies`` (occurrences)."""
    grouped = pa.table({"value": _flat(ids)}).group_by("value", use_threads=False)
    counted = grouped.aggregate([([], "count_all")])
    several = counted.filter(pc.greater(counted.column("count_all"), 1))
    return pa.table({"value": several.column("value"), "copies": several.column("count_all")})


def shared_ids(ids_by_type: Mapping[str, Column]) -> pa.Table:
    """IDs that occur under more than one vertex type: columns ``vertex_id`` and ``types``
    (the number of types holding it)."""
    if len(ids_by_type) < 2:
        return pa.table({"vertex_id": pa.array([], pa.string()), "types": pa.array([], pa.int64())})
    distinct = [pc.unique(_flat(ids)) for ids in ids_by_type.values()]
    counts = duplicate_counts(pa.chunked_array(distinct, pa.string()))
    return pa.table({"vertex_id": counts.column("value"), "types": counts.column("copies")})


def self_loop_mask(sources: Column, targets: Column) -> pa.BooleanArray:
    """True where an edge goes from a vertex to itself."""
    return pc.equal(_flat(sources), _flat(targets))


def isolated_mask(
    vertex_ids: Column, endpoint_ids: Sequence[Column], *, coded: Sequence[Side] | None = None
) -> pa.BooleanArray:
    """True where a vertex is none of ``endpoint_ids`` (the endpoint columns, of every
    relation, on the sides where this vertex type stands).

    ``coded``: the same columns as (pair codes, side), in place of ``endpoint_ids``.
    """
    ids = _flat(vertex_ids)
    if coded is None:
        chunks = [_flat(c) for c in endpoint_ids if len(c)]
        if not chunks:
            return pc.is_valid(ids)
        touched = pc.unique(pa.chunked_array(chunks, pa.string()).combine_chunks())
        return pc.invert(pc.is_in(ids, value_set=touched))
    isolated = np.ones(len(ids), dtype=bool)
    for side in coded:
        present = np.zeros(len(side[0].dictionary) + 1, dtype=bool)  # last: "not there"
        present[_codes_of(side)] = True
        at = pc.index_in(ids, value_set=side[0].dictionary).fill_null(-1)
        isolated &= ~present[at.to_numpy(zero_copy_only=False)]
    return pa.array(isolated)
