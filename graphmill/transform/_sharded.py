"""Writing a bundle's tensors as shards (layout: :mod:`graphmill._shards`), streamed.

Contract: :func:`write_shards` writes every tensor of the content into ``root/tensors/`` and
the edge tables of the deferred relations into ``root/tables/edges/``, and returns the
tensor index with each tensor's pieces. A deferred relation is read from its engine once
(twice with its reverse) in batches; each batch's endpoints go straight to their place in
the piece files and its rows into a Parquet writer that cuts row groups of the snapshot's
fixed size. So memory holds one batch and one row group, never a relation, and the bytes
depend only on the edges, not on the engine's batch sizes.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from graphmill._shards import (
    TensorFileWriter,
    chunks,
    edge_axis,
    owner,
    piece_file,
    piece_ranges,
    whole_file,
)
from graphmill.bundle import relation_key, table_path
from graphmill.snapshot import PARQUET_OPTIONS
from graphmill.spec import RelationKey
from graphmill.transform._edges import EdgeArrays
from graphmill.transform._relation_edges import (
    DeferredEdges,
    edge_table,
    endpoints_meaning,
    multiplicity_meaning,
)

METADATA = {"bundle_format": "1"}
ROW_GROUP = int(PARQUET_OPTIONS["row_group_size"])


def write_shards(
    root: Path,
    tensors: dict[str, np.ndarray],
    index: dict[str, dict[str, Any]],
    relations: dict[str, dict[str, Any]],
    deferred: dict[str, DeferredEdges],
    per_piece: int,
) -> dict[str, dict[str, Any]]:
    """Write the shards; ``index`` (in-memory tensors) is returned completed with the
    deferred relations' tensors and every tensor's ``axis`` and ``pieces``."""
    index = {k: dict(v) for k, v in index.items()}
    for dotted, d in deferred.items():
        count = relations[dotted]["count"]
        index[relation_key(d.key, "endpoints")] = {
            "dtype": "int64", "shape": [2, count], "meaning": endpoints_meaning(d.key)
        }  # fmt: skip
        if d.stream.merged_repeats:
            index[relation_key(d.key, "multiplicity")] = {
                "dtype": "float32", "shape": [count], "meaning": multiplicity_meaning(d.key)
            }  # fmt: skip
    whole: dict[str, list[str]] = defaultdict(list)
    for name, entry in index.items():
        axis = edge_axis(name)
        if axis is None:
            entry["axis"] = 0
            entry["pieces"] = [{"file": whole_file(owner(name)), "start": 0,
                                "stop": entry["shape"][0]}]  # fmt: skip
            whole[entry["pieces"][0]["file"]].append(name)
        else:
            dotted = owner(name).split(".", 1)[1]
            entry["axis"] = axis
            entry["pieces"] = [
                {"file": piece_file(dotted, k), "start": a, "stop": b}
                for k, (a, b) in enumerate(piece_ranges(entry["shape"][axis], per_piece))
            ]
    for file, keys in sorted(whole.items()):
        writer = TensorFileWriter(
            root / file, {k: (index[k]["dtype"], index[k]["shape"]) for k in keys}, METADATA
        )
        for key in sorted(keys):
            writer.write(key, tensors[key])
        writer.close()
    for dotted, entry in sorted(relations.items()):
        rel = RelationKey.parse(dotted)
        sink = _PieceSink(root, rel, entry["count"], bool(entry["merged"]), per_piece)
        if dotted in deferred:
            d = deferred[dotted]
            rows = _RowGroups(root / table_path("edges", dotted), d.properties, sink.merged)
            for batch in d.stream.read(d.reverse):
                sink.take(batch.source, batch.target, batch.multiplicity)
                rows.take(edge_table(batch, d.properties))
            rows.close()
        else:
            for a, b in _in_memory(entry["count"]):
                ends = tensors[relation_key(rel, "endpoints")]
                multiplicity = tensors.get(relation_key(rel, "multiplicity"))
                sink.take(ends[0, a:b], ends[1, a:b], None if multiplicity is None
                          else multiplicity[a:b])  # fmt: skip
        sink.close()
    return index


def _in_memory(count: int) -> Iterator[tuple[int, int]]:
    yield from chunks(count, 1 << 20)


class _PieceSink:
    """Endpoints (and multiplicities) of one relation, in order, into its piece files."""

    def __init__(
        self, root: Path, key: RelationKey, count: int, merged: bool, per_piece: int
    ) -> None:
        self.root, self.key, self.merged = root, key, merged
        self.ranges = piece_ranges(count, per_piece)
        self.done = 0
        self.writer: TensorFileWriter | None = None
        self.piece = -1
        self._open_next()

    def _open_next(self) -> None:
        if self.writer is not None:
            self.writer.close()
        self.piece += 1
        a, b = self.ranges[self.piece]
        tensors = {relation_key(self.key, "endpoints"): ("int64", [2, b - a])}
        if self.merged:
            tensors[relation_key(self.key, "multiplicity")] = ("float32", [b - a])
        path = self.root / piece_file(self.key.dotted, self.piece)
        self.writer = TensorFileWriter(path, tensors, METADATA)

    def take(self, source: np.ndarray, target: np.ndarray, multiplicity: Any) -> None:
        at = 0
        while at < len(source):
            a, b = self.ranges[self.piece]
            if self.done == b:
                self._open_next()
                continue
            n = min(len(source) - at, b - self.done)
            offset, width = self.done - a, b - a
            assert self.writer is not None
            ends = relation_key(self.key, "endpoints")
            self.writer.write(ends, source[at : at + n], offset)
            self.writer.write(ends, target[at : at + n], width + offset)
            if self.merged:
                values = np.asarray(multiplicity[at : at + n], dtype=np.float32)
                self.writer.write(relation_key(self.key, "multiplicity"), values, offset)
            at, self.done = at + n, self.done + n

    def close(self) -> None:
        if self.writer is not None:
            self.writer.close()
            self.writer = None
        if self.piece != len(self.ranges) - 1 or self.done != self.ranges[-1][1]:
            raise ValueError(f"{self.key.dotted}: edges short of the count")  # a bug


class _RowGroups:
    """An edge table written a row group at a time, cut at the snapshot's fixed size."""

    def __init__(self, path: Path, properties: pa.Table, merged: bool) -> None:
        none = np.zeros(0, dtype=np.int64)
        empty = EdgeArrays(none, none, none, none if merged else None)
        schema = edge_table(empty, properties.slice(0, 0)).schema
        self.path, self.schema = path, schema
        self.pending: list[pa.Table] = []
        self.rows = 0
        options = {k: v for k, v in PARQUET_OPTIONS.items() if k != "row_group_size"}
        path.parent.mkdir(parents=True, exist_ok=True)
        self.writer = pq.ParquetWriter(path, schema, **options)

    def take(self, table: pa.Table) -> None:
        self.pending.append(table.cast(self.schema))
        self.rows += table.num_rows
        while self.rows >= ROW_GROUP:
            joined = pa.concat_tables(self.pending)
            self._write(joined.slice(0, ROW_GROUP))
            rest = joined.slice(ROW_GROUP)
            self.pending, self.rows = [rest], rest.num_rows

    def _write(self, table: pa.Table) -> None:
        self.writer.write_table(table.combine_chunks(), row_group_size=ROW_GROUP)

    def close(self) -> None:
        if self.rows:
            self._write(pa.concat_tables(self.pending))
        self.writer.close()
