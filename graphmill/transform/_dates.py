"""Datetime parts scaled like every other column: standardized or on the unit circle.

Contract: the raw UTC parts come from :func:`graphmill.transform._encoders.datetime_parts`.
Linear parts (``year``, ``epoch_days``) are standardized with the mean and population
standard deviation of the fitted rows (``<property>__<part>__standardized``). Cyclic parts
become two columns, ``sin`` and ``cos`` of ``2π (value - origin) / period``
(``<property>__<part>__sin``, ``__cos``), so December sits next to January and Sunday next to
Monday: ``month`` (origin 1, period 12), ``day`` of the month (origin 1, a fixed period of
31, whatever the month's length), ``day_of_week`` (Monday 0, period 7), ``hour`` (period 24).
A missing timestamp gets the fitted rows' mean of each output column (0 for a standardized
one). Every column therefore lies in [-1, 1] or has mean 0 and spread 1 on the fitted rows.

>>> column_names("opened", ("year", "month"))
['opened__year__standardized', 'opened__month__sin', 'opened__month__cos']
"""

from __future__ import annotations

from typing import Any

import numpy as np

from graphmill.transform._encoders import fit_moments

CYCLES: dict[str, tuple[float, float]] = {  # part -> (origin, period)
    "month": (1.0, 12.0),
    "day": (1.0, 31.0),
    "day_of_week": (0.0, 7.0),
    "hour": (0.0, 24.0),
}


def column_names(prop: str, parts: tuple[str, ...]) -> list[str]:
    """Output column names, in part order."""
    names: list[str] = []
    for part in parts:
        if part in CYCLES:
            names += [f"{prop}__{part}__sin", f"{prop}__{part}__cos"]
        else:
            names.append(f"{prop}__{part}__standardized")
    return names


def _unscaled(raw: np.ndarray, parts: tuple[str, ...]) -> np.ndarray:
    """float64 [N, C]: sin/cos for cyclic parts, the raw value for linear ones; NaN stays."""
    columns: list[np.ndarray] = []
    for j, part in enumerate(parts):
        if part in CYCLES:
            origin, period = CYCLES[part]
            angle = 2 * np.pi * (raw[:, j] - origin) / period
            columns += [np.sin(angle), np.cos(angle)]
        else:
            columns.append(raw[:, j])
    return np.stack(columns, axis=1) if columns else np.zeros((len(raw), 0))


def fit_datetime(raw: np.ndarray, parts: tuple[str, ...], fit_rows: np.ndarray) -> dict[str, Any]:
    """Statistics over ``fit_rows``: per column its fill, and mean/std for linear parts."""
    unscaled = _unscaled(raw, parts)
    names = column_names("", parts)
    columns: list[dict[str, Any]] = []
    j = 0
    for part in parts:
        if part in CYCLES:
            origin, period = CYCLES[part]
            for fn in ("sin", "cos"):
                seen = unscaled[fit_rows, j]
                seen = seen[~np.isnan(seen)]
                fill = float(seen.mean()) if len(seen) else 0.0
                columns.append({"part": part, "cycle": fn, "origin": origin, "period": period,
                                "fill": fill})  # fmt: skip
                j += 1
        else:
            moments = fit_moments(unscaled[:, j], fit_rows)
            columns.append({"part": part, "mean": moments["mean"], "std": moments["std"],
                            "fill": 0.0})  # fmt: skip
            j += 1
    fitted = int((~np.isnan(raw[fit_rows, 0])).sum()) if parts else 0
    return {
        "parts": list(parts),
        "columns": [n.lstrip("_") for n in names],
        "scaling": columns,
        "fitted_values": fitted,
    }


def apply_datetime(raw: np.ndarray, stats: dict[str, Any]) -> np.ndarray:
    """float64 [N, C] by the fitted statistics."""
    parts = tuple(stats["parts"])
    out = _unscaled(raw, parts)
    for j, column in enumerate(stats["scaling"]):
        if "mean" in column:
            out[:, j] = (out[:, j] - column["mean"]) / column["std"]
        out[:, j] = np.where(np.isnan(out[:, j]), column["fill"], out[:, j])
    return out
