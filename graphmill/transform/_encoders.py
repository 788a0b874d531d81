"""Numeric, boolean and datetime encoders: fit on some rows, apply to all.

Each encoder is a pair of pure functions: ``fit_*(values, fit_rows) -> statistics`` (a JSON
mapping that goes into the manifest) and ``apply_*(values, statistics) -> float64 [N, k]``.
Values come in as float64 arrays with NaN for missing; NaN and ±inf both count as missing
and are replaced by the fill value (the mean over the fitted rows, computed after the
transform for ``log``). Statistics use the population standard deviation (``ddof=0``); a
spread below ``10 * float64 epsilon`` (or no fitted rows) is replaced by 1 so that encoding
never divides by (almost) zero. An encoded value beyond the float32 range is an error.

* ``standardize``: ``(v - mean) / std``.
* ``min-max``: ``(v - min) / (max - min)``; values outside the fitted range are not clipped.
* ``log``: ``log1p(v)``, then standardized; a negative value anywhere is an error (log1p
  would be undefined below -1 and misleading between -1 and 0), never silently clipped.
* ``identity``: the number as it is.
* ``boolean``: 1 for true, 0 for false; missing becomes 0.
* ``datetime``: UTC parts ``year``, ``month`` (1-12), ``day`` (1-31), ``day_of_week`` (Monday
  0 … Sunday 6, like Python's ``date.weekday()``), ``hour`` (0-23), ``epoch_days`` (days since
  1970-01-01T00:00Z, with the time of day as a fraction); naive timestamps are taken as UTC.
  The raw parts are then scaled by ``_dates`` (standardized, or sin/cos for cycles).

Column names say what was done: ``<p>__standardized``, ``<p>__log__standardized``,
``<p>__minmax``; ``identity`` keeps the bare property name (the one unscaled output, asked
for explicitly).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill._columns import DATETIME_TYPE, is_multi, kind_of_type

MICROS_PER_DAY = 86_400_000_000
# A spread this small is rounding noise, not information; treated as zero (then as 1).
SPREAD_FLOOR = 10 * float(np.finfo(np.float64).eps)
FLOAT32_MAX = float(np.finfo(np.float32).max)


class BadValue(Exception):  # noqa: N818 - internal signal, turned into InputError by _features
    """A value an encoder cannot use; ``position`` is its row (index order), or None."""

    def __init__(self, message: str, position: int | None = None, hint: str | None = None):
        super().__init__(message)
        self.message, self.position, self.hint = message, position, hint


# --------------------------------------------------------------------------- conversion


def numeric_values(column: pa.Array) -> np.ndarray:
    """float64 [N]; NaN where missing or not finite. Strings must parse as numbers."""
    kind = kind_of_type(column.type)
    if is_multi(column.type):
        raise BadValue("the property holds several values per vertex", hint="use multi-hot")
    if kind in ("datetime", "date"):
        raise BadValue(f"{kind} values are not numbers", hint="use the datetime encoding")
    if kind not in ("integer", "float", "boolean", "string", "null"):
        raise BadValue(f"{kind} values are not numbers")
    floats = _cast_or_locate(column, pa.float64())
    values = np.asarray(floats.to_numpy(zero_copy_only=False), dtype=np.float64)
    return np.where(np.isfinite(values), values, np.nan)


def boolean_values(column: pa.Array) -> np.ndarray:
    """float64 [N] of 0/1, NaN where missing. Numbers: non-zero is true."""
    if is_multi(column.type):
        raise BadValue("the property holds several values per vertex", hint="use multi-hot")
    if kind_of_type(column.type) in ("integer", "float"):
        column = pc.not_equal(column, 0)
    flags = _cast_or_locate(column, pa.bool_())
    return np.asarray(flags.cast(pa.float64()).to_numpy(zero_copy_only=False), np.float64)


def datetime_values(column: pa.Array) -> pa.Array:
    """The column as ``timestamp[us, UTC]`` (dates at midnight; strings parsed as ISO 8601)."""
    t = column.type
    if is_multi(t):
        raise BadValue("the property holds several values per vertex")
    if pa.types.is_date(t):
        column = column.cast(pa.timestamp("us"))
    elif pa.types.is_string(t) or pa.types.is_large_string(t):
        try:  # text without an offset is taken as UTC, like a naive timestamp
            column = column.cast(pa.timestamp("us"))
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
            column = _cast_or_locate(column, pa.timestamp("us", tz="UTC"))
    elif not pa.types.is_timestamp(t):
        raise BadValue(f"{kind_of_type(t)} values are not datetimes")
    if column.type.tz is None:
        column = column.cast(pa.timestamp(column.type.unit)).cast(
            pa.timestamp(column.type.unit, tz="UTC")
        )
    return column.cast(DATETIME_TYPE)


def _cast_or_locate(column: pa.Array, target: pa.DataType) -> pa.Array:
    """Cast, or raise BadValue at the first value that does not convert (found by halving)."""
    try:
        return column.cast(target)
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        pass
    lo, hi = 0, len(column)
    while hi - lo > 1:  # invariant: the first bad value lies in [lo, hi)
        mid = (lo + hi) // 2
        try:
            column.slice(lo, mid - lo).cast(target)
            lo = mid
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
            hi = mid
    shown = column[lo].as_py()
    raise BadValue(f"value {shown!r} is not a {target}", position=lo)


# --------------------------------------------------------------------------- fitting


def _fitted(values: np.ndarray, fit_rows: np.ndarray) -> np.ndarray:
    chosen = values[fit_rows]
    return chosen[~np.isnan(chosen)]


def _spread(value: float) -> float:
    return value if np.isfinite(value) and value > SPREAD_FLOOR else 1.0


def fit_moments(values: np.ndarray, fit_rows: np.ndarray) -> dict[str, Any]:
    """``mean``, ``std`` (ddof 0, zero → 1) and ``fill`` (= mean) over the fitted rows."""
    seen = _fitted(values, fit_rows)
    mean = float(seen.mean()) if len(seen) else 0.0
    std = _spread(float(seen.std())) if len(seen) else 1.0
    return {"mean": mean, "std": std, "fill": mean, "fitted_values": len(seen)}


def fit_range(values: np.ndarray, fit_rows: np.ndarray) -> dict[str, Any]:
    seen = _fitted(values, fit_rows)
    low = float(seen.min()) if len(seen) else 0.0
    high = float(seen.max()) if len(seen) else 1.0
    fill = float(seen.mean()) if len(seen) else 0.0
    return {"min": low, "max": high, "fill": fill, "fitted_values": len(seen)}


def log_values(values: np.ndarray) -> np.ndarray:
    """``log1p`` of non-negative values; BadValue at the first negative one."""
    negative = np.flatnonzero(values < 0)
    if len(negative):
        raise BadValue(
            f"value {float(values[negative[0]]):g} is negative; the log encoding needs values >= 0",
            position=int(negative[0]),
            hint="use standardize or min-max for this property, or fix the value",
        )
    return np.log1p(values)


# --------------------------------------------------------------------------- applying


def _fill(values: np.ndarray, fill: float) -> np.ndarray:
    return np.where(np.isnan(values), fill, values)


def apply_standardize(values: np.ndarray, stats: dict[str, Any]) -> np.ndarray:
    return ((_fill(values, stats["fill"]) - stats["mean"]) / stats["std"])[:, None]


def apply_min_max(values: np.ndarray, stats: dict[str, Any]) -> np.ndarray:
    span = _spread(stats["max"] - stats["min"])
    return ((_fill(values, stats["fill"]) - stats["min"]) / span)[:, None]


def apply_identity(values: np.ndarray, stats: dict[str, Any]) -> np.ndarray:
    return _fill(values, stats["fill"])[:, None]


def datetime_parts(stamps: pa.Array, parts: tuple[str, ...]) -> np.ndarray:
    """float64 [N, len(parts)], NaN where missing."""
    columns = []
    for part in parts:
        if part == "epoch_days":
            micros = stamps.cast(pa.int64()).cast(pa.float64())
            column = pc.divide(micros, float(MICROS_PER_DAY))
        else:
            column = getattr(pc, part)(stamps).cast(pa.float64())
        columns.append(np.asarray(column.to_numpy(zero_copy_only=False), np.float64))
    return np.stack(columns, axis=1) if columns else np.zeros((len(stamps), 0))


def check_float32_range(values: np.ndarray) -> None:
    """BadValue at the first row whose encoded value would overflow float32."""
    rows = np.flatnonzero((np.abs(values) > FLOAT32_MAX).any(axis=1))
    if len(rows):
        raise BadValue(
            "an encoded value is beyond the float32 range",
            position=int(rows[0]),
            hint="check the value; a far outlier against a narrow training range does this",
        )
