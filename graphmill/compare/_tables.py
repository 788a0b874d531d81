"""Set operations between two bundles' Parquet tables.

Vertices are matched by original ID (or pseudonym) with DuckDB joins over the two vertex
tables (each file read once, through :class:`~graphmill.compare._files.SideFiles`); the result
per vertex type is an old-index -> new-index map. Edges are then
compared as multisets of (source, target) pairs in the new index space with numpy over the
two ``source_index``/``target_index`` columns: an old edge is kept when both its ends are kept
and the new bundle has the pair as many times. No per-row Python anywhere.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill.compare._files import SideFiles
from graphmill.errors import require

INDEX = "index"


@dataclass
class BundleSide:
    """One bundle being compared: its folder, its manifest, and the reads of its files
    (unverified unless ``files`` says otherwise)."""

    root: Path
    manifest: dict[str, Any]
    files: SideFiles = field(default=None)  # type: ignore[assignment]

    def __post_init__(self) -> None:
        if self.files is None:
            self.files = SideFiles(self.root, {}, verify=False)

    def vertex_file(self, vertex_type: str) -> str:
        return str(self.manifest["vertex_types"][vertex_type]["table"])

    def edge_file(self, dotted: str) -> str:
        return str(self.manifest["relations"][dotted]["table"])

    def parts_file(self, vertex_type: str) -> str | None:
        parts = self.manifest["vertex_types"][vertex_type].get("parts")
        return str(parts["table"]) if parts else None

    def vertices(self, vertex_type: str) -> pa.Table:
        return self.files.table(self.vertex_file(vertex_type))

    def id_column(self, vertex_type: str) -> str:
        return str(self.manifest["vertex_types"][vertex_type]["id_column"])


def connect() -> Any:
    """An in-memory DuckDB connection (the ``compare`` extra)."""
    duckdb = require("duckdb", "compare")
    return duckdb.connect(":memory:")


def _quoted(name: str) -> str:
    # Names come from the manifest, which the schema limits to [A-Za-z0-9_]; quote anyway.
    return '"' + name.replace('"', '""') + '"'


@dataclass
class VertexMatch:
    """How one vertex type's vertices correspond between the two bundles."""

    old_count: int
    new_count: int
    index_map: pa.Table  # old_index, new_index (int64), sorted by old_index
    changed: dict[str, int]  # property -> kept vertices whose value differs
    part_moves: list[dict[str, Any]] | None  # old part -> new part counts, kept vertices

    @property
    def kept(self) -> int:
        return self.index_map.num_rows

    def lookup(self) -> np.ndarray:
        """old index -> new index, -1 for a removed vertex."""
        lut = np.full(self.old_count, -1, dtype=np.int64)
        old = self.index_map.column("old_index").to_numpy()
        lut[old] = self.index_map.column("new_index").to_numpy()
        return lut


def match_vertices(
    con: Any,
    old: BundleSide,
    new: BundleSide,
    vertex_type: str,
    tables: tuple[pa.Table, pa.Table],
    shared: list[str],
) -> VertexMatch:
    """Join the two vertex ``tables`` on the ID column; count changed values of the
    ``shared`` properties and part moves."""
    key = _quoted(old.id_column(vertex_type))
    # names of this type's own (threads may share a database; keep them apart anyway)
    o_v, n_v, m_t = (_quoted(f"gm_{w}_{vertex_type}") for w in ("old", "new", "map"))
    con.register(f"gm_old_{vertex_type}", tables[0])
    con.register(f"gm_new_{vertex_type}", tables[1])
    # one join: the index pairs and, per shared property, whether the value differs
    flags = "".join(
        f", o.{_quoted(p)} IS DISTINCT FROM n.{_quoted(p)} AS gm_changed_{i}"
        for i, p in enumerate(shared)
    )
    con.sql(
        f"CREATE OR REPLACE TEMP TABLE {m_t} AS SELECT o.index AS old_index, "
        f"n.index AS new_index{flags} FROM {o_v} o JOIN {n_v} n ON o.{key} = n.{key}"
    )
    index_map = con.sql(
        f"SELECT old_index, new_index FROM {m_t} ORDER BY old_index"
    ).to_arrow_table()
    index_map = index_map.cast(pa.schema([("old_index", pa.int64()), ("new_index", pa.int64())]))
    old_n, new_n = tables[0].num_rows, tables[1].num_rows
    changed: dict[str, int] = {}
    if shared:
        sums = ", ".join(f"count(*) FILTER (WHERE gm_changed_{i})" for i in range(len(shared)))
        row = con.sql(f"SELECT {sums} FROM {m_t}").fetchall()[0]
        changed = {p: int(v) for p, v in zip(shared, row, strict=True)}
    con.sql(f"DROP TABLE {m_t}")
    con.unregister(f"gm_old_{vertex_type}")
    con.unregister(f"gm_new_{vertex_type}")
    return VertexMatch(
        old_n,
        new_n,
        index_map,
        changed,
        _part_moves(old, new, vertex_type, index_map, (old_n, new_n)),
    )


def comparable_properties(
    old: BundleSide, schemas: tuple[pa.Schema, pa.Schema], vertex_type: str
) -> list[str]:
    """Properties both vertex tables (``schemas``) hold with the same Arrow type, in the old
    manifest's order."""
    a, b = schemas
    declared = old.manifest["vertex_types"][vertex_type]["properties"]
    return [
        p for p in declared if p in b.names and p in a.names and a.field(p).type == b.field(p).type
    ]


PART_NAMES = ("train", "validation", "test", "(none)")


def _part_codes(side: BundleSide, rel: str, count: int) -> np.ndarray:
    """Part code (index into :data:`PART_NAMES`) of each of ``count`` vertices; 3 = none."""
    table = side.files.table(rel, columns=["index", "part"])
    codes = np.full(count, 3, dtype=np.int64)
    found = pc.index_in(table.column("part"), value_set=pa.array(PART_NAMES[:3]))
    codes[table.column("index").to_numpy()] = pc.fill_null(found, 3).to_numpy()
    return codes


def _part_moves(
    old: BundleSide, new: BundleSide, vertex_type: str, index_map: pa.Table, counts: tuple[int, int]
) -> list[dict[str, Any]] | None:
    """(old part, new part, kept vertices) for every pair that occurs, in part order."""
    old_parts, new_parts = old.parts_file(vertex_type), new.parts_file(vertex_type)
    if old_parts is None or new_parts is None:
        return None
    a = _part_codes(old, old_parts, counts[0])[index_map.column("old_index").to_numpy()]
    b = _part_codes(new, new_parts, counts[1])[index_map.column("new_index").to_numpy()]
    pairs = np.bincount(a * 4 + b, minlength=16)
    return [
        {"from": PART_NAMES[k // 4], "to": PART_NAMES[k % 4], "count": int(pairs[k])}
        for k in np.flatnonzero(pairs)
    ]


@dataclass
class EdgeComparison:
    old: int
    new: int
    kept: int
    old_out: np.ndarray  # out-degree of every source-type vertex, old bundle
    new_out: np.ndarray
    old_in: np.ndarray
    new_in: np.ndarray

    @property
    def added(self) -> int:
        return self.new - self.kept

    @property
    def removed(self) -> int:
        return self.old - self.kept


Endpoints = tuple[np.ndarray, np.ndarray]


def endpoints(side: BundleSide, rel: str) -> Endpoints:
    """source_index, target_index of an edge table as int64 arrays."""
    table = side.files.table(rel, columns=["source_index", "target_index"])
    return (
        table.column(0).to_numpy().astype(np.int64, copy=False),
        table.column(1).to_numpy().astype(np.int64, copy=False),
    )


def compare_edges(
    old_ends: Endpoints,
    new_ends: Endpoints,
    source_lut: np.ndarray,
    target_lut: np.ndarray,
    counts: tuple[int, int, int, int],
) -> EdgeComparison:
    """Multiset comparison of one relation's edges; ``counts`` are the old and new vertex
    counts of the source type, then of the target type."""
    old_s, old_t = old_ends
    new_s, new_t = new_ends
    old_src_n, new_src_n, old_dst_n, new_dst_n = counts
    width = max(new_dst_n, 1)
    kept = _kept_by_blocks(old_ends, new_ends, (source_lut, target_lut), width)
    if kept is None:  # repeated pairs, or an order the bundle layout does not promise
        kept = multiset_overlap(*_keys(old_ends, new_ends, (source_lut, target_lut), width))
    return EdgeComparison(
        old=len(old_s),
        new=len(new_s),
        kept=kept,
        old_out=np.bincount(old_s, minlength=old_src_n),
        new_out=np.bincount(new_s, minlength=new_src_n),
        old_in=np.bincount(old_t, minlength=old_dst_n),
        new_in=np.bincount(new_t, minlength=new_dst_n),
    )


def _keys(
    old_ends: Endpoints, new_ends: Endpoints, luts: tuple[np.ndarray, np.ndarray], width: int
) -> tuple[np.ndarray, np.ndarray]:
    """(source * width + target) in the new index space: the old edges whose ends are kept,
    and the new edges."""
    mapped_s, mapped_t = luts[0][old_ends[0]], luts[1][old_ends[1]]
    alive = (mapped_s >= 0) & (mapped_t >= 0)
    old_keys = np.multiply(mapped_s, width, out=mapped_s)  # in place: no 10M-row temporaries
    old_keys += mapped_t
    if not alive.all():
        old_keys = old_keys[alive]
    new_keys = np.multiply(new_ends[0], width)
    new_keys += new_ends[1]
    return old_keys, new_keys


def _increasing(keys: np.ndarray) -> bool:
    return len(keys) < 2 or bool(np.all(keys[1:] > keys[:-1]))


def _kept_by_blocks(
    old_ends: Endpoints, new_ends: Endpoints, luts: tuple[np.ndarray, np.ndarray], width: int
) -> int | None:
    """Kept edges when both sides are sets sorted by (source, target), the bundle layout
    without repeated pairs; None otherwise. Block by block of old edges: map the block, find
    the new edges of its source range, merge the two sorted runs (a value in both sits
    twice). Temporaries stay block-sized, so memory is reused instead of faulted in."""
    (old_s, old_t), (new_s, new_t) = old_ends, new_ends
    if not (len(new_s) < 2 or bool(np.all(new_s[1:] >= new_s[:-1]))):
        return None
    found, last = 0, -1
    for start in range(0, len(old_s), BLOCK):
        s = luts[0][old_s[start : start + BLOCK]]
        t = luts[1][old_t[start : start + BLOCK]]
        keys = (s * width + t)[(s >= 0) & (t >= 0)]
        if len(keys) == 0:
            continue
        if keys[0] <= last or not _increasing(keys):
            return None
        last = int(keys[-1])
        lo = int(np.searchsorted(new_s, keys[0] // width))
        hi = int(np.searchsorted(new_s, keys[-1] // width, side="right"))
        other = new_s[lo:hi] * width + new_t[lo:hi]
        if not _increasing(other):
            return None
        merged = np.sort(np.concatenate([keys, other]), kind="stable")
        found += int(np.count_nonzero(merged[1:] == merged[:-1]))
    return found


def _sorted(keys: np.ndarray) -> np.ndarray:
    # Bundles store edges sorted and the ID order is the same on both sides, so this is
    # usually a linear check; sort only when needed.
    if len(keys) > 1 and not bool(np.all(keys[1:] >= keys[:-1])):
        return np.sort(keys)
    return keys


def _runs(keys: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Distinct values of a sorted array and how often each occurs."""
    if len(keys) == 0:
        return keys, np.zeros(0, dtype=np.int64)
    starts = np.flatnonzero(np.concatenate([[True], keys[1:] != keys[:-1]]))
    return keys[starts], np.diff(np.append(starts, len(keys)))


def _repeats(keys: np.ndarray) -> bool:
    return len(keys) > 1 and bool(np.any(keys[1:] == keys[:-1]))


BLOCK = 1 << 20  # values of ``a`` merged at a time: small temporaries, reused memory


def _sets_overlap(a: np.ndarray, b: np.ndarray) -> int:
    """Values in both of two sorted arrays without repeats: block by block of ``a``, a stable
    sort of the block and the slice of ``b`` it spans (two sorted runs: one linear merge), where
    a value in both sits twice."""
    found = 0
    for start in range(0, len(a), BLOCK):
        block = a[start : start + BLOCK]
        lo = int(np.searchsorted(b, block[0]))
        hi = int(np.searchsorted(b, block[-1], side="right"))
        merged = np.sort(np.concatenate([block, b[lo:hi]]), kind="stable")
        found += int(np.count_nonzero(merged[1:] == merged[:-1]))
    return found


def multiset_overlap(a: np.ndarray, b: np.ndarray) -> int:
    """Size of the multiset intersection: sum over values of min(count in a, count in b)."""
    a, b = _sorted(a), _sorted(b)
    if len(a) == 0 or len(b) == 0:
        return 0
    if not _repeats(a) and not _repeats(b):  # the usual case (repeats dropped): plain sets
        return _sets_overlap(a, b)
    ua, ca = _runs(a)
    ub, cb = _runs(b)
    # both sorted: a binary search of each distinct value of a in b, no further sort
    at = np.minimum(np.searchsorted(ub, ua), len(ub) - 1)
    hit = ub[at] == ua
    return int(np.minimum(ca[hit], cb[at[hit]]).sum())
