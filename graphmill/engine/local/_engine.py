"""``LocalEngine``: the plan's hot operations as SQL on an embedded DuckDB connection.

Arrow tables go in as zero-copy scans; positions come back as numpy. Operations not moved
yet (``REFERENCE_ONLY`` and anything not in ``native``) run on the reference code, which
this class inherits.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from graphmill.engine._base import Column, FileScan, TableInput
from graphmill.engine._contracts import Offenders
from graphmill.engine.local import _queries as q
from graphmill.engine.local._session import QueryError, Session
from graphmill.engine.reference import ReferenceEngine
from graphmill.errors import InputError
from graphmill.transform._edge_stream import BATCH, EdgeStream
from graphmill.transform._edges import DROP_REASONS, EdgeArrays, EdgeOutcome

ENDPOINTS = ["source_id", "target_id"]


def _column(values: Column) -> pa.ChunkedArray:
    return values if isinstance(values, pa.ChunkedArray) else pa.chunked_array([values])


def _schema(table: TableInput) -> pa.Schema:
    return pq.read_schema(table) if isinstance(table, Path) else table.schema


def _rows(n: int) -> pa.Array:
    return pa.array(np.arange(n, dtype=np.int64))


@dataclass
class _Coded:
    """A check input named in the session (``raw``: a view over the file, or the registered
    Arrow table), its (id, code, as_source, as_target) dictionary, and what is derived from
    it once per stage: the edges with coded endpoints and the distinct pairs (flagged with
    whether the reverse is present only when reciprocity or one-way edges ask)."""

    raw: str
    ids: str
    width: int  # columns of the edge table
    edges: str | None = None
    pairs: str | None = None  # distinct coded pairs with ``copies``
    flagged: str | None = None  # the same with ``back`` (reverse present), when asked for
    keep: object = None  # the Arrow table, held so that its id() stays its own


class LocalEngine(ReferenceEngine):
    """Embedded DuckDB: multi-threaded, spills to disk under ``engine.memory_limit``."""

    kind = "local"
    reads_input_files = True
    native = frozenset(
        {
            "canonical-order",
            "canonical-merge",
            "vertex-index",
            "endpoint-index",
            "edge-policy",
            "mapped-edges",
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
        self._session: Session | None = None
        self._loaded: dict[Path | int, _Coded] = {}  # check inputs, coded once per stage

    def _checked(self, edges: TableInput) -> _Coded:
        """A check input, coded once per stage: every endpoint ID gets an integer code that
        orders as the IDs do, so that the checks hash and compare integers; samples are
        decoded at the end (:meth:`_records`). A file is scanned, never loaded whole."""
        key = edges if isinstance(edges, Path) else id(edges)
        if key not in self._loaded:
            s = self.session
            raw = s.source(edges)
            ids = s.load_query(q.id_codes(raw))
            keep = None if isinstance(edges, Path) else edges
            self._loaded[key] = _Coded(raw, ids, len(_schema(edges)), keep=keep)
        return self._loaded[key]

    def _edges(self, c: _Coded) -> str:
        """The coded edge table (every column), materialized on first use."""
        if c.edges is None:
            c.edges = self.session.load_query(q.coded_edges(c.raw, c.ids))
        return c.edges

    def _pairs(self, c: _Coded) -> str:
        """The distinct coded pairs with ``copies``: one table from which dangling edges,
        loops and exact repeats (without properties) are counted and sampled."""
        if c.pairs is None:
            c.pairs = self.session.load_query(
                q.coded_pairs(c.raw, c.ids)
                if c.edges is None  # straight from the input: coded edges never stored
                else f"SELECT source_id, target_id, count(*) AS copies FROM {c.edges} "
                "GROUP BY source_id, target_id"
            )
        return c.pairs

    def _flagged(self, c: _Coded) -> str:
        """The distinct coded pairs with ``copies`` and ``back`` (the reverse pair is
        present), for reciprocity and one-way edges: made only when one of them asks, so a
        relation between two types never pays for the self-join; it replaces the plain
        pairs table, which it holds whole."""
        if c.flagged is None:
            s = self.session
            c.flagged = s.load_query(q.pair_flags(self._pairs(c)))
            s.connection.execute(f"DROP TABLE {c.pairs}")
            c.pairs = c.flagged
        return c.flagged

    def _records(self, c: _Coded, sample: str, width: int) -> list[dict[str, Any]]:
        """A sample query's records, with coded endpoints decoded."""
        return self.session.records(q.decoded(sample, c.ids, width))

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

    def sorted_parts(
        self, parts: Sequence[Path | FileScan], columns: Sequence[str], keys: Sequence[str]
    ) -> Iterator[pa.RecordBatch]:
        """Scanned and sorted by DuckDB (spilling under the memory limit) and streamed: the
        parts are never held in Python. Ties keep the parts' order, then their row order.
        Input files (:class:`FileScan`) are read, cast and filtered in the same query."""
        if not parts:
            return
        if all(isinstance(p, FileScan) for p in parts):
            yield from self._sorted_scans([p for p in parts if isinstance(p, FileScan)], keys)
            return
        files = [str(p) for p in parts if isinstance(p, Path)]
        if len(files) != len(parts):
            yield from super().sorted_parts(parts, columns, keys)
            return
        floats = any(pa.types.is_floating(t) for t in pq.read_schema(parts[0]).types)
        yield from self.session.batches(q.sorted_parts(files, columns, keys, ties=floats))

    def _sorted_scans(self, scans: list[FileScan], keys: Sequence[str]) -> Iterator[pa.RecordBatch]:
        schema = scans[0].schema
        ties = any(pa.types.is_floating(t) for t in schema.types)
        queries = [
            q.scanned(
                str(scan.path),
                [
                    (f.name, source, q.SQL_TYPES[f.type])
                    for f, source in zip(scan.schema, scan.sources, strict=True)
                ],
                sorted(scan.blank),
                scan.where,
                rank,
                ties=ties,
            )
            for rank, scan in enumerate(scans)
        ]
        try:
            yield from self.session.batches(q.sorted_scans(queries, list(keys), ties=ties))
        except QueryError as exc:
            files = ", ".join(str(s.path) for s in scans)
            text = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
            raise InputError(
                f"cannot read the file: {text[:200]}",
                file=files,
                hint="fix the file or its entry in the spec",
            ) from None

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
        mapped = pa.table({"s": source, "t": target, "row": _rows(len(source))})
        with self.session.tables({"m": mapped}) as n:
            stream = self._police(n["m"], same_type, duplicates, self_loops, symmetrize)
        return stream.outcome()

    def mapped_edges(
        self,
        edges: TableInput,
        source_ids: pa.Array,
        target_ids: pa.Array,
        *,
        same_type: bool,
        duplicates: str,
        self_loops: str,
        symmetrize: bool,
    ) -> EdgeOutcome:
        return self.policed_edges(
            edges,
            source_ids,
            target_ids,
            same_type=same_type,
            duplicates=duplicates,
            self_loops=self_loops,
            symmetrize=symmetrize,
        ).outcome()

    def policed_edges(
        self,
        edges: TableInput,
        source_ids: pa.Array,
        target_ids: pa.Array,
        *,
        same_type: bool,
        duplicates: str,
        self_loops: str,
        symmetrize: bool,
    ) -> EdgeStream:
        """One join per side straight from the file; the policed edges stay in DuckDB
        (spilling under the memory limit) until they are read, in order, in batches.
        Reports the edge rows as ``mapped`` once joined, as ``policed`` once policed."""
        s = self.session
        sources = pa.table({"id": _column(source_ids), "position": _rows(len(source_ids))})
        targets = pa.table({"id": _column(target_ids), "position": _rows(len(target_ids))})
        if isinstance(edges, Path):
            ends: TableInput = edges
            row = "file_row_number"
            count = pq.read_metadata(edges).num_rows
        else:
            ends = edges.select(ENDPOINTS).append_column("gm_row", _rows(edges.num_rows))
            row = "gm_row"
            count = edges.num_rows
        with (
            s.tables({"e": ends, "vs": sources, "vt": targets}, row_numbers=True) as n,
            s.scratch(q.mapped(n["e"], row, n["vs"], n["vt"])) as mapped,
        ):
            self.covered("mapped", count)
            outcome = self._police(
                mapped, same_type, duplicates, self_loops, symmetrize, owned=True
            )
        self.covered("policed", count)
        return outcome

    def _police(
        self,
        m: str,
        same_type: bool,
        duplicates: str,
        self_loops: str,
        symmetrize: bool,
        *,
        owned: bool = False,
    ) -> EdgeStream:
        """``edge-policy`` on the session table ``m`` (``s``, ``t``, ``row``; -1: dangling);
        ``owned``: ``m`` is a scratch table, dropped as soon as the kept edges are taken.
        The resolved edges are kept in the session until the stream is released."""
        s = self.session
        dropped = dict.fromkeys(DROP_REASONS, 0)
        total, both, no_source, no_target = s.ints(q.dangling_counts(m))
        dropped.update(
            {"dangling-both": both, "dangling-source": no_source, "dangling-target": no_target}
        )
        drop_loops = same_type and self_loops == "drop"
        with s.scratch(q.kept_edges(m, drop_loops=drop_loops)) as kept:
            (kept_count,) = s.ints(f"SELECT count(*) FROM {kept}")
            if owned:
                s.connection.execute(f"DROP TABLE {m}")
            if drop_loops:
                dropped["self-loop"] = total - both - no_source - no_target - kept_count
            union = f"SELECT s, t, row, 0 AS added FROM {kept}"
            added = 0
            if same_type and symmetrize:
                with s.scratch(q.missing_reverses(kept)) as extra:
                    (added,) = s.ints(f"SELECT count(*) FROM {extra}")
                    union += f" UNION ALL SELECT s, t, row, 1 FROM {extra}"
                    table = s.load_query(q.resolved_rows(f"({union})", duplicates))
            else:
                table = s.load_query(q.resolved_rows(f"({union})", duplicates))
        (count,) = s.ints(f"SELECT count(*) FROM {table}")
        merge = duplicates == "merge"

        def read(reverse: bool) -> Iterator[EdgeArrays]:
            for batch in s.batches(q.in_order(table, duplicates, reverse=reverse), BATCH):
                columns = [np.asarray(c.to_numpy(), dtype=np.int64) for c in batch.columns]
                source, target, rows = columns[:3]
                yield EdgeArrays(source, target, rows, columns[3] if merge else None)

        def release() -> None:
            if self._session is s:
                s.connection.execute(f"DROP TABLE IF EXISTS {table}")

        removed = kept_count + added - count
        if not merge:
            dropped["repeated-edge"] = removed
        return EdgeStream(
            count, merge, read, dropped, removed if merge else 0, added, release=release
        )

    # ------------------------------------------------------------------ check
    def dangling_edges(
        self, edges: TableInput, source_ids: Column, target_ids: Column, k: int
    ) -> Offenders:
        s = self.session
        c = self._checked(edges)
        sources = pa.table({"vertex_id": _column(source_ids)})
        targets = pa.table({"vertex_id": _column(target_ids)})
        with (
            s.tables({"vs": sources, "vt": targets}) as n,
            s.scratch(q.missing_codes(c.ids, n["vs"], "source")) as no_source,
            s.scratch(q.missing_codes(c.ids, n["vt"], "target")) as no_target,
            s.scratch(q.dangling_pairs(self._pairs(c), no_source, no_target)) as flagged,
        ):
            count, on_source, on_target = s.ints(
                f"SELECT sum(copies), sum(copies) FILTER (WHERE no_source), "
                f"sum(copies) FILTER (WHERE no_target) FROM {flagged}"
            )
            sample = self._records(c, q.sample(flagged, [*ENDPOINTS, q.MISSING_SIDE], k), 3)
        return Offenders(count, sample, {"source_side": on_source, "target_side": on_target})

    def self_loops(self, edges: TableInput, k: int) -> Offenders:
        c = self._checked(edges)
        loops = f"(SELECT * FROM {self._pairs(c)} WHERE source_id = target_id)"
        (count,) = self.session.ints(f"SELECT sum(copies) FROM {loops}")
        return Offenders(count, self._records(c, q.sample(loops, ENDPOINTS, k), 2))

    def repeated_edges(self, edges: TableInput, k: int) -> Offenders:
        s = self.session
        c = self._checked(edges)
        if c.width == 2:  # without properties a repeat is a pair with several copies
            grouped = f"SELECT * FROM {self._pairs(c)} WHERE copies > 1"
        else:
            grouped = (
                f"SELECT source_id, target_id, count(*) AS copies FROM {self._edges(c)} "
                f"GROUP BY {q.group_key(_schema(edges))} HAVING count(*) > 1"
            )
        with s.scratch(grouped) as rep:
            extra, rows = s.ints(f"SELECT sum(copies) - count(*), count(*) FROM {rep}")
            sample = self._records(c, q.sample(rep, [*ENDPOINTS, "copies"], k), 3)
        return Offenders(extra, sample, {"repeated_edges": rows})

    def parallel_edges(self, edges: TableInput, k: int) -> Offenders:
        if len(_schema(edges)) == 2:  # without properties a pair has one distinct row
            return Offenders(0, [], {"pairs": 0})
        s = self.session
        key = q.group_key(_schema(edges))
        c = self._checked(edges)
        grouped = (
            f"SELECT source_id, target_id, count(*) AS variants FROM "
            f"(SELECT source_id, target_id FROM {self._edges(c)} GROUP BY {key}) "
            "GROUP BY source_id, target_id HAVING count(*) > 1"
        )
        with s.scratch(grouped) as par:
            extra, pairs = s.ints(f"SELECT sum(variants) - count(*), count(*) FROM {par}")
            sample = self._records(c, q.sample(par, [*ENDPOINTS, "variants"], k), 3)
        return Offenders(extra, sample, {"pairs": pairs})

    def reciprocity(self, edges: TableInput) -> Offenders:
        pairs = self._flagged(self._checked(edges))
        back, total = self.session.ints(
            f"SELECT count(*) FILTER (WHERE back AND source_id <> target_id), count(*) FROM {pairs}"
        )
        return Offenders(back, [], {"pairs": total})

    def one_way_edges(self, edges: TableInput, k: int) -> Offenders:
        c = self._checked(edges)
        one_way = f"(SELECT * FROM {self._flagged(c)} WHERE NOT back)"
        count, distinct = self.session.ints(f"SELECT sum(copies), count(*) FROM {one_way}")
        sample = self._records(c, q.sample(one_way, ENDPOINTS, k), 2)
        return Offenders(count, sample, {"pairs": distinct})

    def isolated_vertices(
        self, vertex_ids: Column, sides: Sequence[tuple[TableInput, str]], k: int
    ) -> Offenders:
        s = self.session
        id_sources = [
            f"SELECT id FROM {self._checked(edges).ids} WHERE as_{side}" for edges, side in sides
        ]
        vertices = pa.table({"vertex_id": _column(vertex_ids)})
        with s.tables({"v": vertices}) as n, s.scratch(q.isolated(n["v"], id_sources)) as iso:
            (count,) = s.ints(f"SELECT count(*) FROM {iso}")
            (total,) = s.ints(f"SELECT count(DISTINCT vertex_id) FROM {n['v']}")
            sample = s.records(q.sample(iso, ["vertex_id"], k))
        return Offenders(count, sample, {"total": total})

    def duplicate_vertex_ids(self, vertex_ids: Column, k: int) -> Offenders:
        s = self.session
        vertices = pa.table({"vertex_id": _column(vertex_ids)})
        with s.tables({"v": vertices}) as n, s.scratch(q.repeated_ids(n["v"])) as dup:
            extra, ids = s.ints(f"SELECT sum(copies) - count(*), count(*) FROM {dup}")
            sample = s.records(q.sample(dup, ["vertex_id", "copies"], k)) if ids else []
        return Offenders(extra, sample, {"ids": ids})

    def shared_vertex_ids(self, ids_by_type: Mapping[str, Column], k: int) -> Offenders:
        if not ids_by_type:
            return Offenders(0, [], {"total": 0})
        s = self.session
        tables = {
            f"v{i}": pa.table({"vertex_id": _column(ids)})
            for i, ids in enumerate(ids_by_type.values())
        }
        with s.tables(tables) as n, s.scratch(q.shared_ids(list(n.values()))) as shared:
            (count,) = s.ints(f"SELECT count(*) FROM {shared}")
            (total,) = s.ints(q.distinct_ids(list(n.values())))
            sample = s.records(q.sample(shared, ["vertex_id"], k)) if count else []
        return Offenders(count, sample, {"total": total})
