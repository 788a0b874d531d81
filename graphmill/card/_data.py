"""What the card plots, read from a bundle's Parquet tables with pyarrow and numpy."""

from __future__ import annotations

from collections import Counter
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from graphmill.compare._drift import finite_values, kind_of
from graphmill.errors import BundleIntegrityError

TOP_CATEGORIES = 12
BATCH_ROWS = 1 << 16  # rows per record batch read: 512 KiB of each int64 column


def degree_points(
    root: Path, manifest: dict[str, Any], dotted: str, *, batch_rows: int = BATCH_ROWS
) -> dict[str, Any]:
    """(degree, number of vertices with it) for out- and in-degrees of one relation. The
    edge table is read one record batch at a time: memory is one int64 per vertex per side
    plus a batch, never the whole index columns."""
    entry = manifest["relations"][dotted]
    degrees = {
        "out": np.zeros(manifest["vertex_types"][entry["source_type"]]["count"], np.int64),
        "in": np.zeros(manifest["vertex_types"][entry["target_type"]]["count"], np.int64),
    }
    sides = (("out", "source_index"), ("in", "target_index"))
    edges_path = root / entry["table"]
    with pq.ParquetFile(edges_path) as edges:
        for batch in edges.iter_batches(batch_rows, columns=[c for _, c in sides]):
            for side, column in sides:
                add_counts(degrees[side], batch.column(column), edges_path)
    out = {}
    for side, degree in degrees.items():
        values, n = np.unique(degree[degree > 0], return_counts=True)
        out[side] = (values.astype(np.float64), n.astype(np.float64))
    return out


def add_counts(into: np.ndarray, indices: pa.Array, where: Path) -> None:
    """Add one to ``into[i]`` for each ``i`` in ``indices``, in place: no per-batch array of
    the vertex count (``np.add.at`` is unbuffered; a ``bincount`` would allocate one)."""
    idx = indices.to_numpy(zero_copy_only=False).astype(np.int64, copy=False)
    if len(idx) and (idx.min() < 0 or idx.max() >= len(into)):
        raise BundleIntegrityError(
            f"a vertex index outside 0..{len(into) - 1} in {where.name}",
            file=str(where),
            hint="rebuild the bundle; its manifest's vertex count does not match its edges",
        )
    np.add.at(into, idx, 1)


def class_balance(
    root: Path, manifest: dict[str, Any], *, batch_rows: int = BATCH_ROWS
) -> dict[str, dict[str, int]] | None:
    """part -> class -> vertices, for the labelled type's parts. The vertex table's row ``i``
    is vertex ``i`` (its ``index`` column is ``0..N-1``, checked batch by batch), so each part
    row's class is a ``take`` of the label column at its index: no hash join."""
    label = manifest.get("label")
    if not label:
        return None
    entry = manifest["vertex_types"][label["vertex_type"]]
    if not entry.get("parts"):
        return None
    classes = label_column(root / entry["table"], label["property"], batch_rows)
    counts: Counter[tuple[str, str]] = Counter()
    with pq.ParquetFile(root / entry["parts"]["table"]) as parts:
        for batch in parts.iter_batches(batch_rows, columns=["index", "part"]):
            values = classes.take(batch.column("index"))
            grouped = pa.table({"part": batch.column("part"), "class": values})
            rows = grouped.group_by(["part", "class"]).aggregate([([], "count_all")])
            for row in rows.to_pylist():
                counts[row["part"], row["class"] or "(none)"] += row["count_all"]
    out: dict[str, dict[str, int]] = {}
    for (part, cls), n in counts.items():
        out.setdefault(part, {})[cls] = n
    return out


def label_column(path: Path, prop: str, batch_rows: int = BATCH_ROWS) -> pa.Array:
    """The vertex table's ``prop`` as strings, after checking its ``index`` column is the row
    number (what :mod:`graphmill.transform._vertices` writes)."""
    chunks: list[pa.Array] = []
    offset = 0
    with pq.ParquetFile(path) as vertices:
        for batch in vertices.iter_batches(batch_rows, columns=["index", prop]):
            expected = pa.array(np.arange(offset, offset + batch.num_rows, dtype=np.int64))
            if not batch.column("index").cast(pa.int64()).equals(expected):
                raise BundleIntegrityError(
                    f"{path.name}: the index column is not the row number at row {offset}",
                    file=str(path),
                    hint="rebuild the bundle with this graphmill",
                )
            chunks.append(batch.column(prop).cast(pa.string()))
            offset += batch.num_rows
    return pa.concat_arrays(chunks) if chunks else pa.array([], pa.string())


def feature_values(root: Path, manifest: dict[str, Any]) -> list[dict[str, Any]]:
    """The raw values of every property used as a feature: numeric arrays or top categories."""
    out = []
    for vt, entry in manifest["vertex_types"].items():
        encoders = entry["features"]["encoders"]
        if not encoders:
            continue
        path = root / entry["table"]
        names = set(pq.read_schema(path).names)
        for enc in encoders:
            prop = enc["property"]
            if prop not in names:
                continue
            column = pq.read_table(path, columns=[prop]).column(prop)  # one column at a time
            kind = kind_of(column.type)
            item = {"vertex_type": vt, "property": prop, "encoding": enc["encoding"]}
            if kind == "numeric" and not pa.types.is_boolean(column.type):
                out.append({**item, "values": finite_values(column)})
            elif kind == "categorical":
                counted = pc.value_counts(column.drop_null())
                pairs = sorted(
                    zip(
                        counted.field("values").cast(pa.string()).to_pylist(),
                        counted.field("counts").to_pylist(),
                        strict=True,
                    ),
                    key=lambda p: (-p[1], p[0]),
                )[:TOP_CATEGORIES]
                out.append({**item, "categories": pairs})
    return out
