"""The reference engine: the plain Arrow/numpy code every other engine is checked against.

Single-threaded and in memory, readable rather than fast. The operations call the pure
functions of ``graphmill/transform`` and ``graphmill/validate/rules``; nothing is copied
here. The endpoint codes of an edge table (one dictionary encoding of both ID columns) are
computed once per table and shared by the check operations, as the rules allow.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from graphmill.engine._base import Column, Engine, TableInput
from graphmill.engine._contracts import OPERATIONS, Offenders
from graphmill.transform._edges import EdgeOutcome, apply_edge_policy
from graphmill.transform._indexing import first_rows_by_id, map_endpoints
from graphmill.validate._context import sorted_sample
from graphmill.validate.rules import (
    PairCodes,
    dangling_mask,
    distinct_pairs,
    distinct_rows,
    duplicate_counts,
    exact_repeats,
    isolated_mask,
    pair_codes,
    parallel_variants,
    reciprocated_mask,
    reciprocity_counts,
    self_loop_mask,
    shared_ids,
)

ENDPOINTS = ["source_id", "target_id"]


def _sum(mask: pa.Array | pa.ChunkedArray) -> int:
    return int(pc.sum(mask).as_py() or 0)


class ReferenceEngine(Engine):
    """Every operation on the reference code."""

    kind = "reference"
    native = frozenset(OPERATIONS)

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self._memo: dict[tuple[str, int], tuple[pa.Table, Any]] = {}
        self._files: dict[Path, pa.Table] = {}

    def close(self) -> None:
        self._memo.clear()
        self._files.clear()

    def _shared(self, what: str, edges: pa.Table, compute: Any) -> Any:
        """``compute()`` once per edge table (kept alive with the result, so ``id`` holds)."""
        key = (what, id(edges))
        if key not in self._memo:
            self._memo[key] = (edges, compute())
        return self._memo[key][1]

    def _table(self, edges: TableInput) -> pa.Table:
        """An input as an Arrow table; a file is read once per engine."""
        if not isinstance(edges, Path):
            return edges
        if edges not in self._files:
            self._files[edges] = pq.read_table(edges)
        return self._files[edges]

    def _codes(self, edges: pa.Table) -> PairCodes:
        return self._shared(
            "codes",
            edges,
            lambda: pair_codes(edges.column("source_id"), edges.column("target_id")),
        )

    def _distinct(self, edges: pa.Table) -> pa.Table:
        return self._shared(
            "distinct", edges, lambda: distinct_rows(edges, codes=self._codes(edges))
        )

    # ------------------------------------------------------------------ pull
    def canonical_order(self, table: pa.Table, keys: Sequence[str]) -> np.ndarray:
        if not table.num_rows or not keys:
            return np.arange(table.num_rows, dtype=np.int64)
        order = pc.sort_indices(table.select(list(keys)), [(k, "ascending") for k in keys])
        return np.asarray(order.to_numpy(), dtype=np.int64)

    # ------------------------------------------------------------------ build
    def first_rows_by_id(self, ids: Column) -> np.ndarray:
        return first_rows_by_id(ids)

    def endpoint_positions(self, edges: TableInput, side: str, vertex_ids: pa.Array) -> np.ndarray:
        column = f"{side}_id"
        if isinstance(edges, Path):  # one column, not kept: the build maps each side once
            return map_endpoints(pq.read_table(edges, columns=[column]).column(0), vertex_ids)
        return map_endpoints(edges.column(column), vertex_ids)

    def edge_policy(
        self,
        source: np.ndarray,
        target: np.ndarray,
        *,
        same_type: bool,
        vertex_count: int,
        duplicates: str,
        self_loops: str,
        symmetrize: bool,
    ) -> EdgeOutcome:
        return apply_edge_policy(
            source,
            target,
            same_type=same_type,
            vertex_count=vertex_count,
            duplicates=duplicates,
            self_loops=self_loops,
            symmetrize=symmetrize,
        )

    # ------------------------------------------------------------------ check
    def dangling_edges(
        self, edges: TableInput, source_ids: Column, target_ids: Column, k: int
    ) -> Offenders:
        edges = self._table(edges)
        codes = self._codes(edges)
        src = dangling_mask(edges.column("source_id"), source_ids, coded=(codes, "source"))
        dst = dangling_mask(edges.column("target_id"), target_ids, coded=(codes, "target"))
        either = pc.or_(src, dst)
        records = edges.select(ENDPOINTS).filter(either)
        src, dst = src.filter(either), dst.filter(either)
        missing = pc.if_else(pc.and_(src, dst), "both", pc.if_else(src, "source", "target"))
        records = records.append_column("missing", missing)
        details = {"source_side": _sum(src), "target_side": _sum(dst)}
        return Offenders(_sum(either), sorted_sample(records, k), details)

    def self_loops(self, edges: TableInput, k: int) -> Offenders:
        edges = self._table(edges)
        mask = self_loop_mask(edges.column("source_id"), edges.column("target_id"))
        return Offenders(_sum(mask), sorted_sample(edges.select(ENDPOINTS).filter(mask), k))

    def repeated_edges(self, edges: TableInput, k: int) -> Offenders:
        edges = self._table(edges)
        repeats = exact_repeats(edges, codes=self._codes(edges), distinct=self._distinct(edges))
        extra = _sum(repeats.column("copies")) - repeats.num_rows
        return Offenders(extra, sorted_sample(repeats, k), {"repeated_edges": repeats.num_rows})

    def parallel_edges(self, edges: TableInput, k: int) -> Offenders:
        edges = self._table(edges)
        codes, distinct = self._codes(edges), self._distinct(edges)
        variants = parallel_variants(edges, codes=codes, distinct=distinct)
        extra = _sum(variants.column("variants")) - variants.num_rows
        return Offenders(extra, sorted_sample(variants, k), {"pairs": variants.num_rows})

    def reciprocity(self, edges: TableInput) -> Offenders:
        edges = self._table(edges)
        back, pairs = reciprocity_counts(
            edges.column("source_id"), edges.column("target_id"), codes=self._codes(edges)
        )
        return Offenders(back, [], {"pairs": pairs})

    def one_way_edges(self, edges: TableInput, k: int) -> Offenders:
        edges = self._table(edges)
        codes = self._codes(edges)
        back = reciprocated_mask(edges.column("source_id"), edges.column("target_id"), codes=codes)
        mask = pc.invert(back)
        one_way = edges.select(ENDPOINTS).filter(mask)
        subset = codes.subset(mask.to_numpy(zero_copy_only=False))
        pairs = distinct_pairs(one_way.column(0), one_way.column(1), codes=subset)
        return Offenders(_sum(mask), sorted_sample(one_way, k), {"pairs": pairs})

    def isolated_vertices(
        self, vertex_ids: Column, sides: Sequence[tuple[TableInput, str]], k: int
    ) -> Offenders:
        tables = [(self._table(edges), side) for edges, side in sides]
        ids = vertex_ids.combine_chunks() if isinstance(vertex_ids, pa.ChunkedArray) else vertex_ids
        coded = [(self._codes(edges), side) for edges, side in tables]
        mask = isolated_mask(
            ids, [edges.column(f"{side}_id") for edges, side in tables], coded=coded
        )
        isolated = pc.unique(ids.filter(mask))
        sample = sorted_sample(pa.table({"vertex_id": isolated}), k)
        return Offenders(len(isolated), sample, {"total": len(pc.unique(ids))})

    def duplicate_vertex_ids(self, vertex_ids: Column, k: int) -> Offenders:
        dups = duplicate_counts(vertex_ids)
        records = pa.table({"vertex_id": dups.column("value"), "copies": dups.column("copies")})
        extra = _sum(dups.column("copies")) - dups.num_rows
        return Offenders(extra, sorted_sample(records, k), {"ids": dups.num_rows})

    def shared_vertex_ids(self, ids_by_type: Mapping[str, Column], k: int) -> Offenders:
        shared = shared_ids(ids_by_type)
        chunks = [pc.unique(c) for c in ids_by_type.values()]
        every = pa.chunked_array(chunks, pa.string())
        total = len(pc.unique(every)) if len(every) else 0
        sample = sorted_sample(shared.select(["vertex_id"]), k)
        return Offenders(shared.num_rows, sample, {"total": total})
