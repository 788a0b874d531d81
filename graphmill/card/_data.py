"""What the card plots, read from a bundle's Parquet tables with pyarrow and numpy."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from graphmill.compare._drift import finite_values, kind_of

TOP_CATEGORIES = 12


def degree_points(root: Path, manifest: dict[str, Any], dotted: str) -> dict[str, Any]:
    """(degree, number of vertices with it) for out- and in-degrees of one relation; the
    edge table is read a row group at a time (a sharded bundle's relation may not fit)."""
    entry = manifest["relations"][dotted]
    counts = {
        "out": manifest["vertex_types"][entry["source_type"]]["count"],
        "in": manifest["vertex_types"][entry["target_type"]]["count"],
    }
    degrees = {side: np.zeros(n, dtype=np.int64) for side, n in counts.items()}
    edges = pq.ParquetFile(root / entry["table"])
    for batch in edges.iter_batches(columns=["source_index", "target_index"]):
        for side, column in (("out", 0), ("in", 1)):
            idx = batch.column(column).to_numpy().astype(np.int64, copy=False)
            degrees[side] += np.bincount(idx, minlength=counts[side])
    out = {}
    for side, degree in degrees.items():
        values, n = np.unique(degree[degree > 0], return_counts=True)
        out[side] = (values.astype(np.float64), n.astype(np.float64))
    return out


def class_balance(root: Path, manifest: dict[str, Any]) -> dict[str, dict[str, int]] | None:
    """part -> class -> vertices, for the labelled type's parts."""
    label = manifest.get("label")
    if not label:
        return None
    entry = manifest["vertex_types"][label["vertex_type"]]
    if not entry.get("parts"):
        return None
    vertices = pq.read_table(root / entry["table"], columns=["index", label["property"]])
    parts = pq.read_table(root / entry["parts"]["table"], columns=["index", "part"])
    joined = parts.join(vertices, "index")
    values = joined.column(label["property"]).cast(pa.string())
    grouped = pa.table({"part": joined.column("part"), "class": values}).group_by(["part", "class"])
    rows = grouped.aggregate([([], "count_all")]).to_pylist()
    out: dict[str, dict[str, int]] = {}
    for row in rows:
        out.setdefault(row["part"], {})[row["class"] or "(none)"] = row["count_all"]
    return out


def feature_values(root: Path, manifest: dict[str, Any]) -> list[dict[str, Any]]:
    """The raw values of every property used as a feature: numeric arrays or top categories."""
    out = []
    for vt, entry in manifest["vertex_types"].items():
        encoders = entry["features"]["encoders"]
        if not encoders:
            continue
        table = pq.read_table(root / entry["table"])
        for enc in encoders:
            prop = enc["property"]
            if prop not in table.column_names:
                continue
            column = table.column(prop)
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
