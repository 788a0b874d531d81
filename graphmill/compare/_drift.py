"""Drift of property values, labels, degrees and check findings between two versions.

Numeric properties (integers and floats) get PSI over the old values' deciles and the KS
statistic; categorical ones (strings, booleans) get new and vanished categories and the shift
of their shares. Values are the raw shipped property values, not the encoded features (whose
encoders are refitted for every build).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill.compare._stats import ks_counts, ks_sorted, psi_from_shares, psi_sorted, summary

LISTED = 20  # categories and findings listed by name before "and N more"


def kind_of(arrow_type: pa.DataType) -> str | None:
    """``numeric``, ``categorical`` or None (not compared: lists, dates, binaries)."""
    if pa.types.is_integer(arrow_type) or pa.types.is_floating(arrow_type):
        return "numeric"
    if (
        pa.types.is_string(arrow_type)
        or pa.types.is_large_string(arrow_type)
        or pa.types.is_boolean(arrow_type)
    ):
        return "categorical"
    return None


def finite_values(column: pa.ChunkedArray) -> np.ndarray:
    """Non-null, finite values as float64."""
    values = column.drop_null().to_numpy().astype(np.float64, copy=False)
    return values[np.isfinite(values)]


def numeric_drift(old: pa.ChunkedArray, new: pa.ChunkedArray) -> dict[str, Any]:
    a, b = np.sort(finite_values(old)), np.sort(finite_values(new))
    psi = psi_sorted(a, b) if len(a) and len(b) else None
    ks = ks_sorted(a, b) if len(a) and len(b) else None
    return {
        "psi": None if psi is None else round(psi, 6),
        "ks": None if ks is None else round(ks, 6),
        "old": summary(a),
        "new": summary(b),
    }


def category_counts(column: pa.ChunkedArray) -> dict[str, int]:
    counted = pc.value_counts(column.drop_null())
    values = counted.field("values").cast(pa.string()).to_pylist()
    return dict(zip(values, counted.field("counts").to_pylist(), strict=True))


def _counted(column: pa.ChunkedArray) -> tuple[pa.Array, np.ndarray]:
    counted = pc.value_counts(column.drop_null())
    values = counted.field("values").cast(pa.string())
    return values, counted.field("counts").to_numpy(zero_copy_only=False).astype(np.int64)


def categorical_drift(old: pa.ChunkedArray, new: pa.ChunkedArray) -> dict[str, Any]:
    """:func:`counts_drift` of two columns, vectorized: no Python per category, so a
    property with a million distinct values costs array work, not a million dict entries."""
    (va, ca), (vb, cb) = _counted(old), _counted(new)
    keys = pc.unique(pa.concat_arrays([va, vb]))
    a = np.zeros(len(keys), dtype=np.int64)
    b = np.zeros(len(keys), dtype=np.int64)
    a[pc.index_in(va, value_set=keys).to_numpy()] = ca
    b[pc.index_in(vb, value_set=keys).to_numpy()] = cb
    return _drift_of_counts(keys, a, b)


def counts_drift(a: dict[str, int], b: dict[str, int]) -> dict[str, Any]:
    """New and vanished categories, share shift, and the largest share changes."""
    keys = sorted(set(a) | set(b))
    return _drift_of_counts(
        pa.array(keys, pa.string()),
        np.array([a.get(k, 0) for k in keys], dtype=np.int64),
        np.array([b.get(k, 0) for k in keys], dtype=np.int64),
    )


def _names(keys: pa.Array, mask: np.ndarray, rank: np.ndarray) -> list[str]:
    """The first :data:`LISTED` keys under ``mask``, in key order."""
    chosen = np.flatnonzero(mask)
    chosen = chosen[np.argsort(rank[chosen], kind="stable")][:LISTED]
    return [str(k) for k in keys.take(pa.array(chosen, pa.int64())).to_pylist()]


def _drift_of_counts(keys: pa.Array, a: np.ndarray, b: np.ndarray) -> dict[str, Any]:
    rank = np.empty(len(keys), dtype=np.int64)  # position of each key in sorted order
    rank[pc.sort_indices(keys).to_numpy()] = np.arange(len(keys))
    appeared, vanished = (a == 0) & (b > 0), (a > 0) & (b == 0)
    p = a / max(int(a.sum()), 1)
    q = b / max(int(b.sum()), 1)
    gap = np.abs(q - p)
    largest = np.lexsort((rank, -gap))[:5]
    names = keys.take(pa.array(largest, pa.int64())).to_pylist()
    if a.sum() and b.sum():
        tv, psi = 0.5 * float(gap.sum()), psi_from_shares(p[np.argsort(rank)], q[np.argsort(rank)])
    else:
        tv, psi = 0.0, 0.0
    return {
        "new_categories": _names(keys, appeared, rank),
        "new_category_count": int(appeared.sum()),
        "vanished_categories": _names(keys, vanished, rank),
        "vanished_category_count": int(vanished.sum()),
        "total_variation": round(tv, 6),
        "psi": round(psi, 6),
        "largest_shifts": [
            {
                "category": str(k),
                "old_share": round(float(p[i]), 6),
                "new_share": round(float(q[i]), 6),
            }
            for k, i in zip(names, largest, strict=True)
        ],
    }


def label_drift(
    old_manifest: dict[str, Any], new_manifest: dict[str, Any]
) -> dict[str, Any] | None:
    """Class sizes of the labelled type, old and new, and their share shift."""
    old_label, new_label = old_manifest.get("label"), new_manifest.get("label")
    if not old_label or not new_label or old_label["vertex_type"] != new_label["vertex_type"]:
        return None
    vt = old_label["vertex_type"]
    a = old_manifest["vertex_types"][vt]["label"]["class_sizes"]
    b = new_manifest["vertex_types"][vt]["label"]["class_sizes"]
    drift = counts_drift(a, b)
    return {
        "vertex_type": vt,
        "property": new_label["property"],
        "old": dict(sorted(a.items())),
        "new": dict(sorted(b.items())),
        "new_classes": drift["new_categories"],
        "vanished_classes": drift["vanished_categories"],
        "total_variation": drift["total_variation"],
        "psi": drift["psi"],
    }


def degree_drift(old: np.ndarray, new: np.ndarray) -> dict[str, Any]:
    ks = ks_counts(old, new)
    return {
        "ks": None if ks is None else round(ks, 6),
        "old_mean": round(float(old.mean()), 6) if len(old) else None,
        "new_mean": round(float(new.mean()), 6) if len(new) else None,
        "old_max": int(old.max()) if len(old) else None,
        "new_max": int(new.max()) if len(new) else None,
    }


def _finding_key(f: dict[str, Any]) -> tuple[str, tuple[tuple[str, str], ...]]:
    return f["rule"], tuple(sorted(f["subject"].items()))


def findings_drift(old_manifest: dict[str, Any], new_manifest: dict[str, Any]) -> dict[str, Any]:
    """Check findings (from the manifests' validation summaries) that appeared, disappeared
    or changed count or severity."""
    a = {_finding_key(f): f for f in (old_manifest.get("validation") or {}).get("findings", [])}
    b = {_finding_key(f): f for f in (new_manifest.get("validation") or {}).get("findings", [])}
    changed = [
        {**b[k], "old_count": a[k]["count"], "old_severity": a[k]["severity"]}
        for k in sorted(set(a) & set(b))
        if (a[k]["count"], a[k]["severity"]) != (b[k]["count"], b[k]["severity"])
    ]
    return {
        "appeared": [b[k] for k in sorted(set(b) - set(a))],
        "disappeared": [a[k] for k in sorted(set(a) - set(b))],
        "changed": changed,
    }
