"""The ``feature-copies-label`` rule: a feature property that (nearly) copies the label.

Contract: on the train part of the labelled vertex type, each property that feeds a feature
is scored against the target; a score at or above ``checks.label_copy_threshold`` is a
finding.

- Classes (:func:`copy_accuracy`): leave-one-out accuracy of predicting a vertex's class as
  the most common class among the *other* train vertices with the same property value (a
  tie, or a value no other train vertex has, predicts nothing and counts as wrong). A copy
  scores 1; an identifier (every value once) scores 0, although a lookup table would
  "predict" it perfectly on train.
- Numbers (:func:`copy_correlation`): the absolute Pearson correlation of a numeric property
  with the target over the train vertices that have both (categorical properties are scored
  as for classes only).

Missing values never predict; they stay in the denominator.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill.bundle import table_path, vertex_key
from graphmill.spec import PipelineSpec
from graphmill.transform._writer import BundleContent


def copy_accuracy(values: np.ndarray, labels: np.ndarray) -> tuple[int, np.ndarray]:
    """(correct leave-one-out predictions, their positions) over vertices with a class.

    ``values``: int64 code of each vertex's property value, -1 missing; ``labels``: class
    code, -1 none (ignored).

    >>> copy_accuracy(np.array([0, 0, 1, 1, 2]), np.array([5, 5, 6, 6, 5]))[0]
    4
    >>> copy_accuracy(np.array([0, 1, 2]), np.array([0, 0, 1]))[0]  # an identifier
    0
    """
    rows = np.flatnonzero(labels >= 0)
    v, c = values[rows], labels[rows]
    if len(rows) == 0:
        return 0, rows
    width = int(c.max()) + 1
    codes = np.where(v >= 0, v, -1) * width + c
    pair, counts = np.unique(codes, return_counts=True)  # sorted (value, class) codes
    own = counts[np.searchsorted(pair, codes)]
    value, klass = pair // width, pair % width
    order = np.lexsort((-counts, value))  # per value, classes by count, largest first
    value, klass, ranked = value[order], klass[order], counts[order]
    starts = np.flatnonzero(np.concatenate([[True], value[1:] != value[:-1]]))
    top_value, top_class, top = value[starts], klass[starts], ranked[starts]
    second = np.zeros(len(starts), dtype=np.int64)
    has_second = np.append(starts[1:], len(value)) - starts > 1
    second[has_second] = ranked[starts[has_second] + 1]
    at = np.searchsorted(top_value, np.where(v >= 0, v, -1))
    best_other = np.where(top_class[at] == c, second[at], top[at])
    correct = (v >= 0) & (own - 1 > best_other)
    return int(correct.sum()), rows[correct]


def copy_correlation(values: np.ndarray, target: np.ndarray) -> tuple[float, int]:
    """(|Pearson r|, rows used) over rows where both are finite; 0 when either is constant.

    >>> round(copy_correlation(np.array([1.0, 2, 3, np.nan]), np.array([2.0, 4, 6, 1]))[0], 6)
    1.0
    """
    both = np.isfinite(values) & np.isfinite(target)
    x, y = values[both], target[both]
    if len(x) < 2 or float(x.std()) == 0.0 or float(y.std()) == 0.0:
        return 0.0, int(both.sum())
    return abs(float(np.corrcoef(x, y)[0, 1])), int(both.sum())


def value_codes(column: pa.Array | pa.ChunkedArray) -> np.ndarray:
    """An int64 code per row for equal values (lists by their items), -1 where missing."""
    if isinstance(column, pa.ChunkedArray):
        column = column.combine_chunks()
    if pa.types.is_list(column.type) or pa.types.is_large_list(column.type):
        seen: dict[tuple[Any, ...], int] = {}
        rows = column.to_pylist()
        return np.array(
            [-1 if r is None else seen.setdefault(tuple(r), len(seen)) for r in rows],
            dtype=np.int64,
        )
    indices = pc.dictionary_encode(column).indices
    return np.asarray(pc.fill_null(indices.cast(pa.int64()), -1).to_numpy(), dtype=np.int64)


def audit_label_copies(
    content: BundleContent, spec: PipelineSpec, severity: str
) -> list[dict[str, Any]]:
    """Findings of ``feature-copies-label`` for the labelled type's feature properties."""
    label = spec.label
    if severity == "off" or label is None:
        return []
    name = label.vertex_type
    properties = list(dict.fromkeys(f.property for f in spec.features if f.vertex_type == name))
    if not properties:
        return []
    table = content.tables[table_path("vertices", name)]
    entry = content.manifest["vertex_types"][name]
    train = content.tensors[vertex_key(name, "part.train.positions")]
    numbers = spec.task is not None and spec.task.kind == "vertex-values"
    target = content.tensors[vertex_key(name, "targets" if numbers else "labels")][train]
    has_target = np.isfinite(target) if numbers else target >= 0
    threshold = spec.checks.label_copy_threshold
    findings = []
    for prop in properties:
        column = table.column(prop).take(pa.array(train))
        if numbers:
            if not (pa.types.is_integer(column.type) or pa.types.is_floating(column.type)):
                continue
            as_float = pc.fill_null(pc.cast(column, pa.float64()), float("nan"))
            score, used = copy_correlation(np.asarray(as_float.to_numpy()), target)
            hits = np.zeros(0, dtype=np.int64)
            how = f"|correlation| {score:.3f}"
        else:
            used, hits = copy_accuracy(value_codes(column), target)
            score = used / max(int(has_target.sum()), 1)
            how = f"leave-one-out accuracy {score:.3f}"
        if score < threshold or used == 0:
            continue
        of = int(has_target.sum())
        findings.append(
            {
                "rule": "feature-copies-label",
                "severity": severity,
                "subject": {"vertex_type": name, "property": prop},
                "count": used,
                "denominator": of,
                "score": round(score, 6),
                "sample": _sample(table, entry, train, hits, prop, spec.checks.sample_size),
                "message": f"{name}.{prop}: predicts {label.property} on the train part "
                f"({how}, {used} of {of} vertices; threshold {threshold:g}): "
                "a near-copy of the label; remove the feature",
            }
        )
    return findings


def _sample(
    table: pa.Table,
    entry: dict[str, Any],
    train: np.ndarray,
    hits: np.ndarray,
    prop: str,
    size: int,
) -> list[dict[str, Any]]:
    """A few train vertices the property predicts: ID and value, in index order."""
    rows = train[np.sort(hits)[:size]]
    ids = table.column(entry["id_column"]).take(pa.array(rows)).to_pylist()
    values = table.column(prop).take(pa.array(rows)).to_pylist()
    return [{"vertex": i, "value": str(v)} for i, v in zip(ids, values, strict=True)]
