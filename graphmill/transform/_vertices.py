"""One vertex type into the bundle: its table, label codes, parts and features.

Contract: for the labelled type the label is coded (``_labels``), the parts drawn
(``_splits``) and the encoders fitted on the train part only; for every other type they are
fitted on all vertices. Adds tables, tensors and the type's manifest entry to the content;
returns warnings.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pyarrow as pa

from graphmill.bundle import table_path, vertex_key
from graphmill.connectors.base import VERTEX_ID
from graphmill.spec import PipelineSpec
from graphmill.transform._features import FeatureTable, encode_vertex_features
from graphmill.transform._indexing import VertexIndex
from graphmill.transform._labels import class_codes, label_strings
from graphmill.transform._pinned import PinnedVocabularies
from graphmill.transform._splits import (
    HASH,
    PARTS,
    achieved_shares,
    part_flags,
    part_positions,
    split_vertices,
)
from graphmill.transform._targets import refuse_float_classes
from graphmill.transform._writer import BundleContent

INDEX = "index"
PSEUDONYM = "pseudonym"


def add_vertex_type(
    content: BundleContent,
    spec: PipelineSpec,
    vi: VertexIndex,
    pinned: PinnedVocabularies | None = None,
    *,
    features: bool = True,
) -> list[str]:
    """Add everything about ``vi.vertex_type`` to ``content``; return warnings. Without
    ``features`` the feature encoders are not fitted (what the check stage's audit needs)."""
    name, n = vi.vertex_type, vi.count
    warnings: list[str] = []
    index = pa.array(np.arange(n, dtype=np.int64))
    id_column = PSEUDONYM if spec.pseudonymize else VERTEX_ID
    vertices = pa.table({INDEX: index, id_column: vi.public_ids})
    for column in vi.table.column_names[1:]:
        vertices = vertices.append_column(column, vi.table.column(column))
    content.tables[table_path("vertices", name)] = vertices
    entry: dict[str, Any] = {
        "count": n,
        "id_column": id_column,
        "properties": vi.table.column_names[1:],
        "table": table_path("vertices", name),
        "label": None,
        "parts": None,
        "codes": {},
    }
    fit_rows = np.arange(n, dtype=np.int64)
    content.manifest.setdefault("vertex_types", {})[name] = entry
    wanted = [f for f in spec.features if f.vertex_type == name]
    label = spec.label
    if label is not None and label.vertex_type == name:
        fit_rows = _add_label_and_parts(content, spec, vi, entry, warnings)
        if any(f.property == label.property for f in wanted):
            warnings.append(
                f"features.{name}: property {label.property!r} is also the label; the "
                "features reveal the label"
            )
    if features:
        encoded = encode_vertex_features(name, vi.table, wanted, fit_rows, vi.public_ids, pinned)
        warnings += encoded.warnings
        _add_features(content, name, index, encoded, entry)
    content.manifest.setdefault("vertex_types", {})[name] = entry
    return warnings


def _add_label_and_parts(
    content: BundleContent,
    spec: PipelineSpec,
    vi: VertexIndex,
    entry: dict[str, Any],
    warnings: list[str],
) -> np.ndarray:
    assert spec.label is not None
    name, prop = vi.vertex_type, spec.label.property
    if spec.task is not None and spec.task.kind == "vertex-values":
        from graphmill.transform._vertex_values import add_vertex_values

        return add_vertex_values(content, spec, vi, warnings)
    column = vi.table.column(prop)
    refuse_float_classes(column, where="label.property", side="vertex")
    strings = label_strings(column, where=f"label.property ({prop})")
    codes, classes = class_codes(strings)
    content.add_tensor(
        vertex_key(name, "labels"), codes, f"{name}: class code per vertex, -1 unlabeled"
    )
    labelled = int((codes >= 0).sum())
    sizes_by_class = np.bincount(codes[codes >= 0], minlength=len(classes))
    entry["label"] = {
        "property": prop,
        "classes": classes,
        "class_sizes": {c: int(k) for c, k in zip(classes, sizes_by_class, strict=True)},
        "labelled": labelled,
        "tensor": vertex_key(name, "labels"),
    }
    if labelled == 0:
        warnings.append(f"label.property: no {name!r} vertex has a value for {prop!r}")
    content.manifest["task"] = {
        "kind": "vertex-classes",
        "vertex_type": name,
        "property": prop,
        "tensor": vertex_key(name, "labels"),
        "classes": classes,
    }
    positions = add_vertex_parts(content, spec, vi, codes, classes, warnings)
    content.manifest["label"] = {"vertex_type": name, "property": prop, "classes": classes}
    return positions


def add_vertex_parts(
    content: BundleContent,
    spec: PipelineSpec,
    vi: VertexIndex,
    codes: np.ndarray,
    classes: list[str],
    warnings: list[str],
) -> np.ndarray:
    """Draw the parts of the target type (strata: ``codes`` into ``classes``, -1 without a
    target) from the keyed hash of each original ID, add their tensors, table and manifest
    entries; return the train positions."""
    name = vi.vertex_type
    entry = content.manifest["vertex_types"][name]
    split = spec.split
    fractions = (split.train, split.validation, split.test)
    part_of = split_vertices(
        codes,
        vi.unit_interval(split.seed),  # original IDs, even when pseudonymized
        method=split.method,
        fractions=fractions,
        tolerance=split.tolerance,
        only_labeled=split.only_labeled,
    )
    positions, flags = part_positions(part_of), part_flags(part_of)
    for part in PARTS:
        content.add_tensor(
            vertex_key(name, f"part.{part}.positions"),
            positions[part],
            f"{name}: sorted indices in {part}",
        )
        content.add_tensor(
            vertex_key(name, f"part.{part}.flags"), flags[part], f"{name}: membership of {part}"
        )
    assigned = np.flatnonzero(part_of >= 0)
    content.tables[table_path("parts", name)] = pa.table(
        {
            "index": pa.array(assigned.astype(np.int64)),
            "part": pa.array(
                np.asarray(PARTS, dtype=object)[part_of[assigned]].tolist(), pa.string()
            ),
        }
    )
    sizes = {part: len(positions[part]) for part in PARTS}
    entry["parts"] = {"table": table_path("parts", name), "sizes": sizes}
    content.manifest["split"] = {
        "method": split.method,
        "seed": split.seed,
        "fractions": dict(zip(PARTS, fractions, strict=True)),
        "only_labeled": split.only_labeled,
        "tolerance": split.tolerance,
        "rounding": "hash threshold per vertex; boundary within ceil(tolerance * n) of "
        "the largest-remainder size per stratum; one train vertex per non-empty stratum",
        "generator": HASH,
        "sizes": sizes,
        "achieved_shares": achieved_shares(part_of, codes, classes),
    }
    if sizes["train"] == 0 and spec.features:
        warnings.append(f"split: the train part of {name!r} is empty; encoders use defaults")
    return positions["train"]


def _add_features(
    content: BundleContent, name: str, index: pa.Array, encoded: FeatureTable, entry: dict[str, Any]
) -> None:
    has_table = bool(encoded.names or encoded.codes)
    tensor = None
    if encoded.matrix is not None:
        tensor = content.add_tensor(
            vertex_key(name, "features"),
            encoded.matrix,
            f"{name}: encoded features, one row per vertex",
        )
    entry["features"] = {
        "columns": encoded.names,
        "width": len(encoded.names),
        "tensor": tensor,
        "table": table_path("features", name) if has_table else None,
        "encoders": encoded.encoders,
    }
    for prop, codes in encoded.codes.items():
        stats = next(
            e["statistics"] for e in encoded.encoders if e.get("code_column") == f"{prop}__code"
        )
        entry["codes"][prop] = {
            "tensor": content.add_tensor(
                vertex_key(name, f"codes.{prop}"), codes, f"{name}: category code of {prop!r}"
            ),
            "vocabulary": stats["vocabulary"],
            "unknown_code": stats["unknown_code"],
        }
    if has_table:
        table = pa.table({INDEX: index})
        if encoded.matrix is not None:
            for j, column in enumerate(encoded.names):
                values = pa.array(encoded.matrix[:, j])
                table = table.append_column(pa.field(column, pa.float32()), [values])
        for prop, codes in encoded.codes.items():
            table = table.append_column(f"{prop}__code", [pa.array(codes)])
        content.tables[table_path("features", name)] = table
