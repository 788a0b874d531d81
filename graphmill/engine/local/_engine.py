"""``LocalEngine``: the plan's hot operations as SQL on an embedded DuckDB connection.

Arrow tables go in as zero-copy scans; positions come back as numpy. Operations not moved
yet (``REFERENCE_ONLY`` and anything not in ``native``) run on the reference code, which
this class inherits.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from graphmill.engine._base import Column, TableInput
from graphmill.engine._contracts import Offenders
from graphmill.engine.local import _queries as q
from graphmill.engine.local._session import Session
from graphmill.engine.reference import ReferenceEngine
from graphmill.transform._edges import DROP_REASONS, EdgeArrays, EdgeOutcome

ENDPOINTS = ["source_id", "target_id"]


def _column(values: Column) -> pa.ChunkedArray:
    return values if isinstance(values, pa.ChunkedArray) else pa.chunked_array([values])


def _schema(table: TableInput) -> pa.Schema:
    return pq.read_schema(table) if isinstance(table, Path) else table.schema


def _rows(n: int) -> pa.Array:
    return pa.array(np.arange(n, dtype=np.int64))


@dataclass(frozen=True)
class _Coded:
    """A loaded edge table with coded endpoints, and its (id, code) dictionary."""

    edges: str
    ids: str


class LocalEngine(ReferenceEngine):
    """Embedded DuckDB: multi-threaded, spills to disk under ``engine.memory_limit``."""

    kind = "local"
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
        }
    )

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self._session: Session | None = None
        self._loaded: dict[Path, _Coded] = {}  # snapshot files read once per stage
        self._pairs: dict[str, str] = {}  # a coded table -> its distinct (s, t) pairs

    def _checked(self, edges: TableInput) -> pa.Table | _Coded:
        """A check input. A file is read once per stage into a session table whose endpoint
        columns hold integer codes that order as the IDs do, so that every check hashes
        and compares integers; samples are decoded at the end (:meth:`_records`)."""
        if not isinstance(edges, Path):
            return edges
        if edges not in self._loaded:
            s = self.session
            raw = s.load(edges)
            ids = s.load_query(q.id_codes(raw))
            self._loaded[edges] = _Coded(s.load_query(q.coded_edges(raw, ids)), ids)
            s.connection.execute(f"DROP TABLE {raw}")
        return self._loaded[edges]

    @staticmethod
    def _table(checked: pa.Table | _Coded) -> pa.Table | str:
        return checked.edges if isinstance(checked, _Coded) else checked

    def _records(self, checked: pa.Table | _Coded, sample: str, width: int) -> list[dict[str, Any]]:
        """A sample query's records, with coded endpoints decoded."""
        if isinstance(checked, _Coded):
            sample = q.decoded(sample, checked.ids, width)
        return self.session.records(sample)

    def _vertex_set(self, checked: pa.Table | _Coded, table: str) -> str:
        """A vertex ID table as the checked edges name vertices (codes, when coded)."""
        if isinstance(checked, _Coded):
            return (
                f"(SELECT code AS vertex_id FROM {checked.ids} "
                f"SEMI JOIN {table} w ON id = w.vertex_id)"
            )
        return table

    @property
    def session(self) -> Session:
        """The DuckDB session, connected on first use."""
        if self._session is None:
            self._session = Session(
                memory_limit=self.settings.memory_limit,
                threads=self.settings.threads,
                spill_folder=self.spill_folder,
            )
        return self._session

    def close(self) -> None:
        super().close()
        self._loaded.clear()
        self._pairs.clear()
        if self._session is not None:
            self._session.close()
            self._session = None

    # ------------------------------------------------------------------ pull
    def canonical_order(self, table: pa.Table, keys: Sequence[str]) -> np.ndarray:
        if not table.num_rows or not keys:
            return np.arange(table.num_rows, dtype=np.int64)
        keyed = table.select(list(keys)).append_column("gm_row", _rows(table.num_rows))
        with self.session.tables({"t": keyed}) as n:
            return self.session.positions(q.order_by(keys, "gm_row").format(t=n["t"]))

    # ------------------------------------------------------------------ build
    def first_rows_by_id(self, ids: Column) -> np.ndarray:
        table = pa.table({"id": _column(ids), "row": _rows(len(ids))})
        with self.session.tables({"v": table}) as n:
            return self.session.positions(q.first_rows(n["v"]))

    def endpoint_positions(self, edges: TableInput, side: str, vertex_ids: pa.Array) -> np.ndarray:
        s = self.session
        column = f"{side}_id"
        if isinstance(edges, Path):  # scanned in parallel; file_row_number is the row
            ends: TableInput = edges
            rows = f"(SELECT {column} AS id, file_row_number AS row FROM {{e}})"
        else:
            ends = pa.table({column: edges.column(column), "row": _rows(edges.num_rows)})
            rows = f"(SELECT {column} AS id, row FROM {{e}})"
        verts = pa.table({"id": _column(vertex_ids), "position": _rows(len(vertex_ids))})
        with s.tables({"e": ends, "v": verts}, row_numbers=True) as n:
            (count,) = s.ints(f"SELECT count(*) FROM {n['e']}")
            found = s.arrow(q.endpoint_positions(rows.format(e=n["e"]), n["v"]))
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
        s = self.session
        mapped = pa.table({"s": source, "t": target, "row": _rows(len(source))})
        dropped = dict.fromkeys(DROP_REASONS, 0)
        with s.tables({"m": mapped}) as n:
            both, no_source, no_target = s.ints(q.dangling_counts(n["m"]))
            dropped.update(
                {"dangling-both": both, "dangling-source": no_source, "dangling-target": no_target}
            )
            drop_loops = same_type and self_loops == "drop"
            with s.scratch(q.kept_edges(n["m"], drop_loops=drop_loops)) as kept:
                (kept_count,) = s.ints(f"SELECT count(*) FROM {kept}")
                if drop_loops:
                    dropped["self-loop"] = len(source) - both - no_source - no_target - kept_count
                union = f"SELECT s, t, row, 0 AS added FROM {kept}"
                added = 0
                if same_type and symmetrize:
                    with s.scratch(q.missing_reverses(kept)) as extra:
                        (added,) = s.ints(f"SELECT count(*) FROM {extra}")
                        union += f" UNION ALL SELECT s, t, row, 1 FROM {extra}"
                        result = s.arrow(q.resolved(f"({union})", duplicates))
                else:
                    result = s.arrow(q.resolved(f"({union})", duplicates))

        def column(name: str) -> np.ndarray:
            return np.asarray(result.column(name).to_numpy(), dtype=np.int64)

        multiplicity = column("multiplicity") if duplicates == "merge" else None
        edges = EdgeArrays(column("s"), column("t"), column("row"), multiplicity)
        removed = kept_count + added - len(edges)
        outcome = EdgeOutcome(edges, dropped, added_reverses=added)
        if duplicates == "merge":
            outcome.merged = removed
        else:
            outcome.dropped["repeated-edge"] = removed
        return outcome

    # ------------------------------------------------------------------ check
    def dangling_edges(
        self, edges: TableInput, source_ids: Column, target_ids: Column, k: int
    ) -> Offenders:
        s = self.session
        sources = pa.table({"vertex_id": _column(source_ids)})
        targets = pa.table({"vertex_id": _column(target_ids)})
        checked = self._checked(edges)
        with s.tables({"e": self._table(checked), "vs": sources, "vt": targets}) as n:
            vs, vt = self._vertex_set(checked, n["vs"]), self._vertex_set(checked, n["vt"])
            with s.scratch(q.dangling_edges(n["e"], vs, vt)) as flagged:
                count, on_source, on_target = s.ints(
                    f"SELECT count(*), count(*) FILTER (WHERE no_source), "
                    f"count(*) FILTER (WHERE no_target) FROM {flagged}"
                )
                sample = self._records(
                    checked, q.sample(flagged, [*ENDPOINTS, q.MISSING_SIDE], k), 3
                )
        return Offenders(count, sample, {"source_side": on_source, "target_side": on_target})

    def self_loops(self, edges: TableInput, k: int) -> Offenders:
        s = self.session
        checked = self._checked(edges)
        with s.tables({"e": self._table(checked)}) as n:
            loops = f"(SELECT * FROM {n['e']} WHERE source_id = target_id)"
            (count,) = s.ints(f"SELECT count(*) FROM {loops}")
            return Offenders(count, self._records(checked, q.sample(loops, ENDPOINTS, k), 2))

    def repeated_edges(self, edges: TableInput, k: int) -> Offenders:
        s = self.session
        key = q.group_key(_schema(edges))
        checked = self._checked(edges)
        with s.tables({"e": self._table(checked)}) as n:
            grouped = (
                f"SELECT source_id, target_id, count(*) AS copies FROM {n['e']} "
                f"GROUP BY {key} HAVING count(*) > 1"
            )
            with s.scratch(grouped) as rep:
                extra, rows = s.ints(f"SELECT sum(copies) - count(*), count(*) FROM {rep}")
                sample = self._records(checked, q.sample(rep, [*ENDPOINTS, "copies"], k), 3)
        return Offenders(extra, sample, {"repeated_edges": rows})

    def parallel_edges(self, edges: TableInput, k: int) -> Offenders:
        if len(_schema(edges)) == 2:  # without properties a pair has one distinct row
            return Offenders(0, [], {"pairs": 0})
        s = self.session
        key = q.group_key(_schema(edges))
        checked = self._checked(edges)
        with s.tables({"e": self._table(checked)}) as n:
            grouped = (
                f"SELECT source_id, target_id, count(*) AS variants FROM "
                f"(SELECT source_id, target_id FROM {n['e']} GROUP BY {key}) "
                "GROUP BY source_id, target_id HAVING count(*) > 1"
            )
            with s.scratch(grouped) as par:
                extra, pairs = s.ints(f"SELECT sum(variants) - count(*), count(*) FROM {par}")
                sample = self._records(checked, q.sample(par, [*ENDPOINTS, "variants"], k), 3)
        return Offenders(extra, sample, {"pairs": pairs})

    @contextmanager
    def _distinct_pairs(self, edges: TableInput) -> Iterator[str]:
        """A table of the distinct (s, t) pairs of ``edges``; kept for the stage when the
        edges came from a file (reciprocity and one-way edges both need it)."""
        checked = self._table(self._checked(edges))
        if isinstance(checked, str) and checked in self._pairs:
            yield self._pairs[checked]
            return
        with self.session.tables({"e": checked}) as n:
            if isinstance(checked, str):
                self._pairs[checked] = self.session.load_query(q.distinct_pairs(n["e"]))
                yield self._pairs[checked]
            else:
                with self.session.scratch(q.distinct_pairs(n["e"])) as pairs:
                    yield pairs

    def reciprocity(self, edges: TableInput) -> Offenders:
        s = self.session
        with self._distinct_pairs(edges) as pairs:
            (back,) = s.ints(q.reciprocated(pairs))
            (total,) = s.ints(f"SELECT count(*) FROM {pairs}")
        return Offenders(back, [], {"pairs": total})

    def one_way_edges(self, edges: TableInput, k: int) -> Offenders:
        s = self.session
        checked = self._checked(edges)
        with (
            s.tables({"e": self._table(checked)}) as n,
            self._distinct_pairs(edges) as pairs,
            s.scratch(q.one_way(n["e"], pairs)) as ow,
        ):
            (count,) = s.ints(f"SELECT count(*) FROM {ow}")
            (distinct,) = s.ints(f"SELECT count(*) FROM ({q.distinct_pairs(ow)})")
            sample = self._records(checked, q.sample(ow, ENDPOINTS, k), 2)
        return Offenders(count, sample, {"pairs": distinct})

    def isolated_vertices(
        self, vertex_ids: Column, sides: Sequence[tuple[TableInput, str]], k: int
    ) -> Offenders:
        s = self.session
        checked = [self._checked(edges) for edges, _ in sides]
        ends = {f"e{i}": self._table(c) for i, c in enumerate(checked)}
        with s.tables({"v": pa.table({"vertex_id": _column(vertex_ids)}), **ends}) as n:
            id_sources = []
            for i, ((_, side), c) in enumerate(zip(sides, checked, strict=True)):
                distinct = f"SELECT DISTINCT {side}_id AS code FROM {n[f'e{i}']}"
                id_sources.append(
                    f"SELECT d.id FROM ({distinct}) c JOIN {c.ids} d USING (code)"
                    if isinstance(c, _Coded)
                    else distinct.replace(" AS code ", " AS id ")
                )
            with s.scratch(q.isolated(n["v"], id_sources)) as iso:
                (count,) = s.ints(f"SELECT count(*) FROM {iso}")
                (total,) = s.ints(f"SELECT count(DISTINCT vertex_id) FROM {n['v']}")
                sample = s.records(q.sample(iso, ["vertex_id"], k))
        return Offenders(count, sample, {"total": total})
