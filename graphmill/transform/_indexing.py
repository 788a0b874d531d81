"""Vertex indices per vertex type, and edge endpoints mapped onto them.

Contract: the vertices of a type get the contiguous indices ``0..N-1`` in the byte order of
their UTF-8 IDs (or of their pseudonyms, when the bundle is pseudonymized, so that an index
reveals nothing about the order of the original IDs). The order depends only on the set of
IDs, never on the order in which rows were extracted. Of several rows with one ID the first
in snapshot order is kept; the others are counted and dropped.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill.connectors.base import VERTEX_ID

NO_VERTEX = -1


@dataclass(frozen=True)
class VertexIndex:
    """The vertices of one type in index order (row ``i`` is the vertex with index ``i``)."""

    vertex_type: str
    ids: pa.Array  # original IDs, string, in index order
    public_ids: pa.Array  # what the bundle ships: the IDs or their pseudonyms
    table: pa.Table  # the kept rows (vertex_id + properties) in index order
    duplicates: int  # rows dropped because their ID repeated an earlier row's
    _units: dict[int, np.ndarray] = field(default_factory=dict, repr=False, compare=False)

    @property
    def count(self) -> int:
        return len(self.ids)

    def unit_interval(self, seed: int) -> np.ndarray:
        """:func:`~graphmill.transform._splits.stable_unit_interval` of the original IDs in
        index order, computed once per seed (the check's audit and the build share it when
        the build reuses this index; see ``_reuse.py``)."""
        from graphmill.transform._splits import stable_unit_interval

        if seed not in self._units:
            units = stable_unit_interval(self.ids, seed)
            units.setflags(write=False)  # shared between stages: never changed in place
            self._units[seed] = units
        return self._units[seed]


def first_rows_by_id(ids: pa.Array | pa.ChunkedArray) -> np.ndarray:
    """Row positions of the first row of each distinct ID, ordered by ID (UTF-8 byte order).

    >>> first_rows_by_id(pa.array(["b", "a", "b", "c"])).tolist()
    [1, 0, 3]
    """
    # sort_indices is stable, so among equal IDs the earliest row comes first.
    order = pc.sort_indices(ids).to_numpy()
    if len(order) == 0:
        return order.astype(np.int64)
    ordered = pc.take(ids, pa.array(order))
    starts = np.ones(len(order), dtype=bool)
    if len(order) > 1:
        same = pc.equal(ordered.slice(1), ordered.slice(0, len(order) - 1))
        starts[1:] = ~np.asarray(same.to_numpy(zero_copy_only=False), dtype=bool)
    return order[starts].astype(np.int64)


def index_vertices(
    vertex_type: str,
    table: pa.Table,
    *,
    pseudonymize: Callable[[pa.Array], pa.Array] | None = None,
    first_rows: Callable[[pa.ChunkedArray], np.ndarray] = first_rows_by_id,
) -> VertexIndex:
    """Deduplicate ``table`` by ``vertex_id`` and put its rows in index order.

    ``pseudonymize``, when given, returns one pseudonym per ID (a closure over the key, so the
    key never passes through here); the rows are then ordered by pseudonym. ``first_rows``:
    an engine's ``vertex-index`` operation (default: :func:`first_rows_by_id`).
    """
    keep = first_rows(table.column(VERTEX_ID))
    kept = table.take(pa.array(keep)).combine_chunks()
    ids = _flat(kept.column(VERTEX_ID))
    public = ids
    if pseudonymize is not None:
        public = _flat(pseudonymize(ids))
        order = pc.sort_indices(public)
        kept = kept.take(order).combine_chunks()
        ids = _flat(kept.column(VERTEX_ID))
        public = public.take(order)
    return VertexIndex(vertex_type, ids, public, kept, table.num_rows - len(keep))


def map_endpoints(endpoint_ids: pa.Array | pa.ChunkedArray, vertex_ids: pa.Array) -> np.ndarray:
    """Index of each endpoint ID among ``vertex_ids`` (positions), or ``-1`` if absent.

    >>> map_endpoints(pa.array(["b", "x", "a"]), pa.array(["a", "b"])).tolist()
    [1, -1, 0]
    """
    found = pc.index_in(endpoint_ids, value_set=vertex_ids)
    return np.asarray(pc.fill_null(found, NO_VERTEX).to_numpy(zero_copy_only=False), dtype=np.int64)


def _flat(column: pa.Array | pa.ChunkedArray) -> pa.Array:
    if isinstance(column, pa.ChunkedArray):
        return column.combine_chunks() if column.num_chunks != 1 else column.chunk(0)
    return column
