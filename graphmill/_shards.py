"""Sharded tensor files: a safetensors writer that streams, and where a sharded bundle keeps
each tensor.

A safetensors file is an 8-byte little-endian header length, a JSON header mapping each
tensor to ``dtype``, ``shape`` and ``data_offsets`` (into the data that follows), then the
data. When every tensor's dtype and shape are known before its values, the header can be
written first and each tensor's bytes put at their place as they arrive, a piece at a time:
:class:`TensorFileWriter` does that, so no tensor is ever held whole to be written.

A sharded bundle keeps its tensors under ``tensors/``: one file per vertex type
(``vertex.<type>.safetensors``), one per relation for the tensors not aligned with its edges
(``relation.<key>.safetensors``: parts, negatives, targets, edge features, codes), and the
edge-aligned ``endpoints`` and ``multiplicity`` in pieces of at most ``edges_per_shard``
edges (``relation.<key>.<k>.safetensors``, ``k`` from ``00000``). Each tensor's entry in the
manifest's index lists its pieces (``file``, ``start``, ``stop`` along ``axis``).
"""

from __future__ import annotations

import json
import math
import os
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np

#: Folder of a sharded bundle's tensor files.
SHARD_FOLDER = "tensors"
#: Edges per piece of a relation's endpoints unless the spec's ``output.shard_edges`` says
#: otherwise (64 MiB of endpoints); a bundle with more edges in all is written sharded.
SHARD_EDGES = 1 << 22
#: Tensors of a relation that are split into pieces of edges, with the axis of the edges.
EDGE_ALIGNED = {"endpoints": 1, "multiplicity": 0}
#: safetensors' names and item sizes of the dtypes a bundle holds.
SAFETENSORS_DTYPES = {"float32": ("F32", 4), "int64": ("I64", 8), "bool": ("BOOL", 1)}
_NUMPY: dict[str, np.dtype[Any]] = {
    "float32": np.dtype("<f4"),
    "int64": np.dtype("<i8"),
    "bool": np.dtype(bool),
}


def owner(key: str) -> str:
    """``vertex.<type>`` or ``relation.<src>.<rel>.<dst>``: whose file holds tensor ``key``."""
    parts = key.split(".")
    return ".".join(parts[:2] if parts[0] == "vertex" else parts[:4])


def whole_file(owner_name: str) -> str:
    return f"{SHARD_FOLDER}/{owner_name}.safetensors"


def piece_file(relation: str, k: int) -> str:
    return f"{SHARD_FOLDER}/relation.{relation}.{k:05d}.safetensors"


def edge_axis(key: str) -> int | None:
    """The axis of the edges when ``key`` is split into pieces of edges, else ``None``."""
    parts = key.split(".")
    if parts[0] != "relation" or len(parts) != 5:
        return None
    return EDGE_ALIGNED.get(parts[4])


def piece_ranges(count: int, per_piece: int) -> list[tuple[int, int]]:
    """``[start, stop)`` of each piece; an empty relation still has one (empty) piece.

    >>> piece_ranges(5, 2), piece_ranges(0, 2)
    ([(0, 2), (2, 4), (4, 5)], [(0, 0)])
    """
    if count == 0:
        return [(0, 0)]
    return [(a, min(a + per_piece, count)) for a in range(0, count, per_piece)]


class TensorFileWriter:
    """A safetensors file whose header is written first and whose tensors are filled in
    pieces (:meth:`write`), in any order; :meth:`close` checks every byte was written.

    ``tensors``: key -> (dtype name, shape); keys are laid out in sorted order."""

    def __init__(
        self, path: Path, tensors: dict[str, tuple[str, list[int]]], metadata: dict[str, str]
    ) -> None:
        self.path = path
        self._spans: dict[str, tuple[int, int, np.dtype[Any]]] = {}
        header: dict[str, Any] = {"__metadata__": metadata}
        end = 0
        for key in sorted(tensors):
            dtype, shape = tensors[key]
            name, size = SAFETENSORS_DTYPES[dtype]
            length = math.prod(shape) * size
            header[key] = {"dtype": name, "shape": list(shape), "data_offsets": [end, end + length]}
            self._spans[key] = (end, length, _NUMPY[dtype])
            end += length
        text = json.dumps(header, separators=(",", ":"), sort_keys=True).encode("utf-8")
        text += b" " * (-len(text) % 8)  # the data starts 8-byte aligned, as the library's
        self._base = 8 + len(text)
        self._written = dict.fromkeys(tensors, 0)
        path.parent.mkdir(parents=True, exist_ok=True)
        self._fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o644)
        os.pwrite(self._fd, len(text).to_bytes(8, "little") + text, 0)
        os.ftruncate(self._fd, self._base + end)

    def write(self, key: str, values: np.ndarray, at: int = 0) -> None:
        """Put ``values`` (any shape, flattened in C order) at element ``at`` of ``key``."""
        begin, length, dtype = self._spans[key]
        data = np.ascontiguousarray(values, dtype=dtype).reshape(-1)
        offset = at * dtype.itemsize
        if offset < 0 or offset + data.nbytes > length:
            raise ValueError(f"{key}: a write outside the tensor")  # a bug, never bad input
        view = data.data.cast("B")  # contiguous: ascontiguousarray above
        while view:
            done = os.pwrite(self._fd, view, self._base + begin + offset)
            view, offset = view[done:], offset + done
        self._written[key] += data.nbytes

    def close(self) -> None:
        os.close(self._fd)
        short = [k for k, (_, n, _) in self._spans.items() if self._written[k] != n]
        if short:
            raise ValueError(f"{self.path.name}: {short[0]} not written whole")  # a bug


def chunks(count: int, rows: int) -> Iterator[tuple[int, int]]:
    """``[start, stop)`` of consecutive chunks of at most ``rows``."""
    for start in range(0, count, rows):
        yield start, min(start + rows, count)
