"""Targets of a task: numbers standardized on the train part, or class codes.

Contract: :func:`target_numbers` reads a single-valued numeric column as float64 with NaN
for a missing (or infinite) value, and refuses anything else naming the key to change;
:func:`refuse_float_classes` refuses a float column as classes (a float label once became
180 classes). :func:`standardize` subtracts the mean and divides by the population standard
deviation of the finite values at ``fit_rows`` (1 when that is 0 or there are none), returns
float32 with NaN kept, and the statistics for the manifest.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill._columns import is_multi
from graphmill.errors import InputError


def refuse_float_classes(column: pa.Array | pa.ChunkedArray, *, where: str, side: str) -> None:
    """Raise :class:`InputError` when ``column`` holds floats and would be coded as classes."""
    if pa.types.is_floating(column.type):
        raise InputError(
            "the values are floating-point numbers (no kind was declared to refuse them at "
            "spec load); read as classes, every distinct value would be a class",
            key_path=where,
            hint=f"declare task: {{kind: {side}-values}} to predict the number, or choose a "
            "property whose values are classes",
        )


def target_numbers(column: pa.Array | pa.ChunkedArray, *, where: str, side: str) -> np.ndarray:
    """The values as float64 [N], NaN where missing; integers and floats only."""
    kind = column.type
    if is_multi(kind) or not (pa.types.is_integer(kind) or pa.types.is_floating(kind)):
        raise InputError(
            f"{where} holds {kind} values, but a {side}-values task needs numbers",
            key_path=where,
            hint=f"declare the property's kind integer or float, or use {side}-classes",
        )
    as_float = pc.cast(column, pa.float64())
    values = pc.fill_null(as_float, float("nan"))
    if isinstance(values, pa.ChunkedArray):
        values = values.combine_chunks()
    out = np.asarray(values.to_numpy(zero_copy_only=False), dtype=np.float64)
    return np.where(np.isfinite(out), out, np.nan)  # an infinity is no usable target


def standardize(values: np.ndarray, fit_rows: np.ndarray) -> tuple[np.ndarray, dict[str, Any]]:
    """``(values - mean) / std`` as float32 with the train statistics.

    >>> out, stats = standardize(np.array([1.0, 3.0, np.nan, 5.0]), np.array([0, 1]))
    >>> out.tolist()[:2], stats["mean"], stats["std"], stats["fitted_count"]
    ([-1.0, 1.0], 2.0, 1.0, 2)
    """
    fit = values[fit_rows]
    fit = fit[np.isfinite(fit)]
    mean = float(fit.mean()) if len(fit) else 0.0
    std = float(fit.std()) if len(fit) else 0.0
    if not std > 0:
        std = 1.0
    out = ((values - mean) / std).astype(np.float32)
    stats = {
        "mean": mean,
        "std": std,
        "fitted_on": "train",
        "fitted_count": len(fit),
        "with_target": int(np.isfinite(values).sum()),
        "std_rule": "population (ddof 0); 1 when 0 or no train value",
    }
    return out, stats
