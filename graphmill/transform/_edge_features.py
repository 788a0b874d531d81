"""Declared edge properties encoded into a tensor aligned with each relation's endpoints.

Contract: ``edge_features`` in the spec maps a relation (``source.relation.target``) to a
feature list like a vertex type's (same encoders, same options, same column names). After
every relation is mapped, each relation with features, and each ``rev_`` relation added for
one, gets ``relation.<key>.features`` float32 [E, F] whose row ``i`` belongs to edge ``i`` of
``relation.<key>.endpoints`` (and of the edge table); ``categories`` gives
``relation.<key>.codes.<property>`` int64 [E]. Encoders are fitted on the relation's training
edges when it has an edge split (``relation.<key>.part.train.positions``), else on all its
edges; the manifest's relation entry says which (``features.fitted_on``). Repeated edges
merged into one keep the first copy's properties; the multiplicity stays its own tensor.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pyarrow as pa

from graphmill.bundle import relation_key, table_path
from graphmill.spec import FeatureSpec, PipelineSpec, RelationKey
from graphmill.transform._features import encode_vertex_features
from graphmill.transform._writer import BundleContent

SECTION = "edge_features"


def edge_feature_specs(spec: PipelineSpec) -> dict[str, tuple[FeatureSpec, ...]]:
    """The declared edge features by dotted relation key (already schema- and cross-checked)."""
    out: dict[str, tuple[FeatureSpec, ...]] = {}
    for dotted, items in (spec.raw.get(SECTION) or {}).items():
        out[dotted] = tuple(
            FeatureSpec(
                vertex_type=dotted,
                property=f["property"],
                encoding=f["encoding"],
                max_categories=f.get("max_categories", 1000),
                datetime_parts=tuple(f.get("datetime_parts", ("year", "month", "day_of_week"))),
                missing=f.get("missing", "indicator"),
            )
            for f in items
        )
    return out


class _EdgeNames:
    """Names edges in error messages without building one string per edge."""

    def __init__(self, table: pa.Table):
        self.table = table

    def __getitem__(self, i: int) -> str:
        s, t = self.table.column("source_index")[i], self.table.column("target_index")[i]
        return f"edge {i} (source index {s}, target index {t})"


def add_edge_features(content: BundleContent, spec: PipelineSpec) -> None:
    """Encode the declared edge features of every relation already in ``content``."""
    declared = edge_feature_specs(spec)
    if not declared:
        return
    for dotted, entry in content.manifest["relations"].items():
        features = declared.get(dotted) or declared.get(entry.get("reverse_of") or "")
        if not features:
            continue
        key = RelationKey.parse(dotted)
        table = content.tables[table_path("edges", dotted)]
        train = content.tensors.get(relation_key(key, "part.train.positions"))
        fit_rows = np.arange(table.num_rows, dtype=np.int64) if train is None else train
        encoded = encode_vertex_features(
            dotted, table, list(features), fit_rows, _EdgeNames(table), section=SECTION
        )
        tensor = None
        if encoded.matrix is not None:
            tensor = content.add_tensor(
                relation_key(key, "features"),
                encoded.matrix,
                f"{dotted}: encoded edge features, one row per edge of endpoints",
            )
        codes: dict[str, Any] = {}
        for prop, values in encoded.codes.items():
            codes[prop] = content.add_tensor(
                relation_key(key, f"codes.{prop}"), values, f"{dotted}: category code of {prop!r}"
            )
        entry["features"] = {
            "columns": encoded.names,
            "width": len(encoded.names),
            "tensor": tensor,
            "codes": codes,
            "encoders": encoded.encoders,
            "fitted_on": "all edges" if train is None else "train edges",
        }
