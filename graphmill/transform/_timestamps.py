"""Timestamps and cut points of a temporal split, as comparable float64 numbers.

Contract: :func:`time_numbers` reads a timestamp, date or numeric column as float64 (times as
microseconds since 1970-01-01 UTC; numbers as they are), NaN where missing.
:func:`cut_point` turns a cut into the same unit: a fraction ``f`` is the timestamp at that
quantile of the timed values, lower interpolation (``numpy.quantile(..., method="lower")``,
as pandas' ``quantile(f, interpolation="lower")``); a date or datetime text its microseconds
(UTC when it has no offset), which only a time column accepts.
"""

from __future__ import annotations

from datetime import UTC, datetime

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill.errors import InputError

EPOCH = datetime(1970, 1, 1, tzinfo=UTC)


def is_time(kind: pa.DataType) -> bool:
    return bool(pa.types.is_timestamp(kind) or pa.types.is_date(kind))


def time_numbers(column: pa.Array | pa.ChunkedArray, *, where: str) -> np.ndarray:
    """float64 [N]: microseconds since the epoch for times, the values for numbers."""
    kind = column.type
    if is_time(kind):
        if pa.types.is_date(kind):
            column = pc.cast(column, pa.timestamp("s"))
        column = pc.cast(column, pa.timestamp("us", tz=getattr(column.type, "tz", None)))
        column = pc.cast(column, pa.int64())
    elif not (pa.types.is_integer(kind) or pa.types.is_floating(kind)):
        raise InputError(
            f"{where} holds {kind} values, not times or numbers",
            key_path=where,
            hint="declare the property's kind datetime, date, integer or float",
        )
    values = pc.fill_null(pc.cast(column, pa.float64()), float("nan"))
    if isinstance(values, pa.ChunkedArray):
        values = values.combine_chunks()
    return np.asarray(values.to_numpy(zero_copy_only=False), dtype=np.float64)


def cut_point(cut: float | datetime, times: np.ndarray, *, time_column: bool, where: str) -> float:
    """The cut in the unit of ``times`` (see the module contract)."""
    if isinstance(cut, datetime):
        if not time_column:
            raise InputError(
                f"{where} is a date, but the timestamps are plain numbers",
                key_path=where,
                hint="give the cut as a fraction, or declare the property datetime or date",
            )
        return (cut - EPOCH).total_seconds() * 1e6
    timed = times[~np.isnan(times)]
    if len(timed) == 0:
        return float("inf")
    return float(np.quantile(timed, cut, method="lower"))


def as_text(value: float, *, time_column: bool) -> str | float:
    """A cut for the manifest: ISO 8601 UTC for times, the number otherwise."""
    if not time_column or not np.isfinite(value):
        return value if np.isfinite(value) else "none"
    return datetime.fromtimestamp(value / 1e6, tz=UTC).isoformat()
