"""Writing a bundle's files into a (scratch) folder, deterministically.

Contract: given the tables, the tensors, the relations left in their engine (``deferred``)
and the manifest body, write every Parquet table with the snapshot's fixed options, the
tensors, then ``manifest.json`` with the tensor index and the ``files`` list (path, bytes,
sha256 of every other file, sorted by path), sealed with its self-hash. A bundle of at most
``shard_edges`` edges in all keeps its tensors in one safetensors file (keys sorted, no
metadata that varies; deferred relations are read into memory first); a larger one is
written sharded and streamed (:mod:`graphmill.transform._sharded`). Nothing here knows the
time or the machine, so equal inputs give equal bytes.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa

from graphmill._atomic import sha256_file
from graphmill._progress import Progress, SilentProgress
from graphmill._schemas import validate_document
from graphmill._shards import SHARD_EDGES
from graphmill.bundle import BUNDLE_FORMAT, MANIFEST_FILE, TENSOR_FILE, seal_manifest
from graphmill.snapshot import write_parquet
from graphmill.transform._relation_edges import DeferredEdges, emit_edges


@dataclass
class BundleContent:
    """What a bundle will hold, gathered before anything is written."""

    tables: dict[str, pa.Table] = field(default_factory=dict)  # relative path -> table
    tensors: dict[str, np.ndarray] = field(default_factory=dict)
    meanings: dict[str, str] = field(default_factory=dict)  # tensor key -> one line
    manifest: dict[str, Any] = field(default_factory=dict)
    deferred: dict[str, DeferredEdges] = field(default_factory=dict)  # dotted -> edges

    def add_tensor(self, key: str, array: np.ndarray, meaning: str) -> str:
        if key in self.tensors:
            raise ValueError(f"tensor {key!r} added twice")  # a bug, never bad input
        self.tensors[key] = np.ascontiguousarray(array)
        self.meanings[key] = meaning
        return key

    def materialize(self) -> None:
        """Read the deferred relations into the tensors and tables."""
        for d in self.deferred.values():
            emit_edges(self, d.key, d.edges(), d.properties)
        self.deferred.clear()


_DTYPE_NAMES = {
    np.dtype(np.float32): "float32",
    np.dtype(np.int64): "int64",
    np.dtype(bool): "bool",
}


def tensor_index(content: BundleContent) -> dict[str, dict[str, Any]]:
    """key -> dtype, shape, meaning; only the three dtypes the loader expects."""
    index = {}
    for key, array in sorted(content.tensors.items()):
        if array.dtype not in _DTYPE_NAMES:
            raise ValueError(f"tensor {key!r} has unexpected dtype {array.dtype}")
        index[key] = {
            "dtype": _DTYPE_NAMES[array.dtype],
            "shape": [int(n) for n in array.shape],
            "meaning": content.meanings[key],
        }
    return index


def write_bundle(
    root: Path,
    content: BundleContent,
    *,
    shard_edges: int = SHARD_EDGES,
    progress: Progress | None = None,
) -> dict[str, Any]:
    """Write everything into ``root`` (an empty folder); return the sealed manifest.
    ``progress`` gets one task, ``write tables``, advanced by each table's rows."""
    total = sum(int(e["count"]) for e in content.manifest.get("relations", {}).values())
    sharded = total > shard_edges
    if not sharded:
        content.materialize()
    tables = sorted(content.tables.items())
    written = (progress or SilentProgress()).task(
        "write tables", total=sum(t.num_rows for _, t in tables)
    )
    for rel_path, table in tables:
        write_parquet(table, root / rel_path)
        written.advance(table.num_rows)
    layout: dict[str, Any] = {}
    if sharded:
        from graphmill.transform._sharded import write_shards

        index = write_shards(
            root,
            content.tensors,
            tensor_index(content),
            content.manifest["relations"],
            content.deferred,
            shard_edges,
        )
        layout = {"tensor_layout": {"kind": "sharded", "edges_per_shard": shard_edges}}
    else:
        from safetensors.numpy import save_file

        # written straight from the arrays: no second copy of every tensor in memory
        save_file(
            dict(sorted(content.tensors.items())),
            root / TENSOR_FILE,
            metadata={"bundle_format": "1"},
        )
        index = tensor_index(content)
    files = []
    for path in sorted(p for p in root.rglob("*") if p.is_file()):
        rel = path.relative_to(root).as_posix()
        files.append({"path": rel, "bytes": path.stat().st_size, "sha256": sha256_file(path)})
    manifest = {
        **content.manifest,
        **layout,
        "bundle_format": BUNDLE_FORMAT,
        "tensors": index,
        "files": files,
    }
    data = seal_manifest(manifest)
    sealed = json.loads(data)
    validate_document("manifest", sealed)  # a mismatch here is a bug in graphmill
    (root / MANIFEST_FILE).write_bytes(data)
    return sealed
