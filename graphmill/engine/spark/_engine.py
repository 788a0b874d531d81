"""``SparkEngine``: the plan's operations as Spark SQL, on a local Spark or a cluster.

The snapshot's Parquet files are read by Spark itself (so on a cluster they must sit where
the executors can read them); in-memory Arrow inputs are sent once as DataFrames. Positions,
counts and samples come back as Arrow (``toArrow``), never through pandas. The query texts
are the local engine's (``engine/local/_queries.py``) in Spark's dialect, so the two engines
cannot drift apart; both are checked against the reference engine.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from graphmill.engine._base import Column, TableInput
from graphmill.engine._contracts import Offenders
from graphmill.engine.local import _queries as q
from graphmill.engine.reference import ReferenceEngine
from graphmill.engine.spark._session import session_for
from graphmill.engine.spark._tables import Tables
from graphmill.transform._edges import DROP_REASONS, EdgeOutcome, resolved_outcome

ENDPOINTS = ["source_id", "target_id"]


def _column(values: Column) -> pa.ChunkedArray:
    return values if isinstance(values, pa.ChunkedArray) else pa.chunked_array([values])


def _schema(table: TableInput) -> pa.Schema:
    return pq.read_schema(table) if isinstance(table, Path) else table.schema


def _rows(n: int) -> pa.Array:
    return pa.array(np.arange(n, dtype=np.int64))


def _spark_orders_exactly(kind: pa.DataType) -> bool:
    """Whether Spark holds ``kind``'s values unchanged, so that it orders them as Arrow does
    (not: unsigned integers, nanosecond times, dictionaries, durations and the like)."""
    t = pa.types
    if t.is_timestamp(kind):
        return bool(kind.unit != "ns")
    return bool(
        t.is_string(kind)
        or t.is_large_string(kind)
        or t.is_binary(kind)
        or t.is_boolean(kind)
        or t.is_signed_integer(kind)
        or (t.is_floating(kind) and not t.is_float16(kind))
        or t.is_date(kind)
        or t.is_decimal(kind)
    )


def _vertex_set(ids: Column) -> pa.Table:
    return pa.table({"vertex_id": _column(ids).cast(pa.string())})


class SparkEngine(ReferenceEngine):
    """Apache Spark (``engine.cluster``: ``local[N]``, a master URL or ``sc://``)."""

    kind = "spark"
    native = frozenset(
        {
            "canonical-order",
            "vertex-index",
            "endpoint-index",
            "edge-policy",
            "dangling-edges",
            "self-loops",
            "repeated-edges",
            "parallel-edges",
            "reciprocity",
            "one-way-edges",
            "isolated-vertices",
            "duplicate-vertex-ids",
            "shared-vertex-ids",
        }
    )

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self._tables: Tables | None = None
        self._pairs: dict[str, str] = {}
        self._arrow: dict[int, tuple[pa.Table, str]] = {}  # in-memory edges, sent once

    @property
    def tables(self) -> Tables:
        """The engine's views in the process's Spark session (started on first use)."""
        if self._tables is None:
            self._tables = Tables(session_for(self.settings))
        return self._tables

    def close(self) -> None:
        super().close()
        self._pairs.clear()
        self._arrow.clear()
        if self._tables is not None:
            self._tables.drop()
            self._tables = None

    def _edges(self, edges: TableInput) -> str:
        if isinstance(edges, Path):
            return self.tables.file_view(edges)
        if id(edges) not in self._arrow:  # kept alive with its view, so the id holds
            self._arrow[id(edges)] = (edges, self.tables.arrow_view(edges, "e"))
        return self._arrow[id(edges)][1]

    # ------------------------------------------------------------------ pull
    def canonical_order(self, table: pa.Table, keys: Sequence[str]) -> np.ndarray:
        if not table.num_rows or not keys:
            return np.arange(table.num_rows, dtype=np.int64)
        if not all(_spark_orders_exactly(table.schema.field(k).type) for k in keys):
            return super().canonical_order(table, keys)  # in memory already: the reference
        keyed = table.select(list(keys)).append_column("gm_row", _rows(table.num_rows))
        t = self.tables.arrow_view(keyed, "t")
        return self.tables.positions(q.order_by(keys, "gm_row").format(t=t))

    # ------------------------------------------------------------------ build
    def first_rows_by_id(self, ids: Column) -> np.ndarray:
        v = self.tables.arrow_view(pa.table({"id": _column(ids), "row": _rows(len(ids))}), "v")
        return self.tables.positions(q.first_rows(v))

    def endpoint_positions(self, edges: TableInput, side: str, vertex_ids: pa.Array) -> np.ndarray:
        t = self.tables
        column = f"{side}_id"
        if isinstance(edges, Path):
            count = pq.read_metadata(edges).num_rows
            rows = t.row_view(edges, column)
        else:
            count = edges.num_rows
            ends = pa.table({"id": edges.column(column), "row": _rows(count)})
            rows = t.arrow_view(ends, "e")
        verts = pa.table({"id": _column(vertex_ids), "position": _rows(len(vertex_ids))})
        found = t.arrow(q.endpoint_positions(rows, t.arrow_view(verts, "v")))
        out = np.full(count, -1, dtype=np.int64)
        out[found.column(0).to_numpy()] = found.column(1).to_numpy()
        return out

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
        t = self.tables
        m = t.arrow_view(pa.table({"s": source, "t": target, "row": _rows(len(source))}), "m")
        dropped = dict.fromkeys(DROP_REASONS, 0)
        _total, both, no_source, no_target = t.ints(q.dangling_counts(m))
        dropped.update(
            {"dangling-both": both, "dangling-source": no_source, "dangling-target": no_target}
        )
        drop_loops = same_type and self_loops == "drop"
        kept = t.query_view(q.kept_edges(m, drop_loops=drop_loops), "kept", keep=True)
        (kept_count,) = t.ints(f"SELECT count(*) FROM {kept}")
        if drop_loops:
            dropped["self-loop"] = len(source) - both - no_source - no_target - kept_count
        union = f"SELECT s, t, row, 0 AS added FROM {kept}"
        added = 0
        if same_type and symmetrize:
            extra = t.query_view(q.missing_reverses(kept), "extra", keep=True)
            (added,) = t.ints(f"SELECT count(*) FROM {extra}")
            union += f" UNION ALL SELECT s, t, row, 1 FROM {extra}"
        result = t.arrow(q.resolved(f"({union})", duplicates))

        return resolved_outcome(
            result, dropped, kept=kept_count, added=added, duplicates=duplicates
        )

    # ------------------------------------------------------------------ check
    def dangling_edges(
        self, edges: TableInput, source_ids: Column, target_ids: Column, k: int
    ) -> Offenders:
        t = self.tables
        e = self._edges(edges)
        vs, vt = (
            t.arrow_view(_vertex_set(source_ids), "vs"),
            t.arrow_view(_vertex_set(target_ids), "vt"),
        )
        # Spark takes IN-subqueries in filters only: the local text, as outer joins.
        flagged = t.query_view(
            f"SELECT e.source_id, e.target_id, a.vertex_id IS NULL AS no_source, "
            f"b.vertex_id IS NULL AS no_target FROM {e} e "
            f"LEFT JOIN (SELECT DISTINCT vertex_id FROM {vs}) a ON e.source_id = a.vertex_id "
            f"LEFT JOIN (SELECT DISTINCT vertex_id FROM {vt}) b ON e.target_id = b.vertex_id "
            "WHERE a.vertex_id IS NULL OR b.vertex_id IS NULL",
            "dangling",
            keep=True,
        )
        count, on_source, on_target = t.ints(
            f"SELECT count(*), count(*) FILTER (WHERE no_source), "
            f"count(*) FILTER (WHERE no_target) FROM {flagged}"
        )
        sample = t.records(q.sample(flagged, [*ENDPOINTS, q.MISSING_SIDE], k)) if count else []
        return Offenders(count, sample, {"source_side": on_source, "target_side": on_target})

    def self_loops(self, edges: TableInput, k: int) -> Offenders:
        t = self.tables
        loops = f"(SELECT * FROM {self._edges(edges)} WHERE source_id = target_id)"
        (count,) = t.ints(f"SELECT count(*) FROM {loops}")
        return Offenders(count, t.records(q.sample(loops, ENDPOINTS, k)) if count else [])

    def repeated_edges(self, edges: TableInput, k: int) -> Offenders:
        t = self.tables
        key = q.group_key(_schema(edges))
        rep = t.query_view(
            f"SELECT source_id, target_id, count(*) AS copies FROM {self._edges(edges)} "
            f"GROUP BY {key} HAVING count(*) > 1",
            "repeated",
            keep=True,
        )
        extra, rows = t.ints(f"SELECT sum(copies) - count(*), count(*) FROM {rep}")
        sample = t.records(q.sample(rep, [*ENDPOINTS, "copies"], k)) if rows else []
        return Offenders(extra, sample, {"repeated_edges": rows})

    def parallel_edges(self, edges: TableInput, k: int) -> Offenders:
        if len(_schema(edges)) == 2:  # without properties a pair has one distinct row
            return Offenders(0, [], {"pairs": 0})
        t = self.tables
        key = q.group_key(_schema(edges))
        par = t.query_view(
            f"SELECT source_id, target_id, count(*) AS variants FROM "
            f"(SELECT source_id, target_id FROM {self._edges(edges)} GROUP BY {key}) "
            "GROUP BY source_id, target_id HAVING count(*) > 1",
            "parallel",
            keep=True,
        )
        extra, pairs = t.ints(f"SELECT sum(variants) - count(*), count(*) FROM {par}")
        sample = t.records(q.sample(par, [*ENDPOINTS, "variants"], k)) if pairs else []
        return Offenders(extra, sample, {"pairs": pairs})

    def _distinct_pairs(self, edges: TableInput) -> str:
        """The distinct (s, t) pairs of ``edges``, cached for the stage (reciprocity and
        one-way edges both need them)."""
        e = self._edges(edges)
        if e not in self._pairs:
            self._pairs[e] = self.tables.query_view(q.distinct_pairs(e), "pairs", keep=True)
        return self._pairs[e]

    def reciprocity(self, edges: TableInput) -> Offenders:
        pairs = self._distinct_pairs(edges)
        back, total = self.tables.ints(
            f"SELECT ({q.reciprocated(pairs)}), (SELECT count(*) FROM {pairs})"
        )
        return Offenders(back, [], {"pairs": total})

    def one_way_edges(self, edges: TableInput, k: int) -> Offenders:
        t = self.tables
        e = self._edges(edges)
        ow = t.query_view(q.one_way(e, self._distinct_pairs(edges)), "oneway", keep=True)
        count, distinct = t.ints(
            f"SELECT count(*), (SELECT count(*) FROM ({q.distinct_pairs(ow)})) FROM {ow}"
        )
        sample = t.records(q.sample(ow, ENDPOINTS, k)) if count else []
        return Offenders(count, sample, {"pairs": distinct})

    def isolated_vertices(
        self, vertex_ids: Column, sides: Sequence[tuple[TableInput, str]], k: int
    ) -> Offenders:
        t = self.tables
        v = t.arrow_view(_vertex_set(vertex_ids), "v")
        id_sources = [
            f"SELECT DISTINCT {side}_id AS id FROM {self._edges(edges)}" for edges, side in sides
        ]
        iso = t.query_view(q.isolated(v, id_sources), "isolated", keep=True)
        count, total = t.ints(
            f"SELECT count(*), (SELECT count(DISTINCT vertex_id) FROM {v}) FROM {iso}"
        )
        sample = t.records(q.sample(iso, ["vertex_id"], k)) if count else []
        return Offenders(count, sample, {"total": total})

    def duplicate_vertex_ids(self, vertex_ids: Column, k: int) -> Offenders:
        t = self.tables
        v = t.arrow_view(_vertex_set(vertex_ids), "v")
        dup = t.query_view(q.repeated_ids(v), "dupids", keep=True)
        extra, ids = t.ints(f"SELECT sum(copies) - count(*), count(*) FROM {dup}")
        sample = t.records(q.sample(dup, ["vertex_id", "copies"], k)) if ids else []
        return Offenders(extra, sample, {"ids": ids})

    def shared_vertex_ids(self, ids_by_type: Mapping[str, Column], k: int) -> Offenders:
        if not ids_by_type:
            return Offenders(0, [], {"total": 0})
        t = self.tables
        vs = [t.arrow_view(_vertex_set(ids), "v") for ids in ids_by_type.values()]
        shared = t.query_view(q.shared_ids(vs), "shared", keep=True)
        (count,) = t.ints(f"SELECT count(*) FROM {shared}")
        (total,) = t.ints(q.distinct_ids(vs))
        sample = t.records(q.sample(shared, ["vertex_id"], k)) if count else []
        return Offenders(count, sample, {"total": total})
