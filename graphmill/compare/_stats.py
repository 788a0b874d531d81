"""Drift statistics over numpy arrays: PSI, the two-sample KS statistic, share shifts.

Pure functions, vectorized; no per-row Python. Missing values (NaN) are dropped by the caller.

>>> round(psi_from_shares([0.4, 0.3, 0.3], [0.35, 0.25, 0.4]), 4)
0.0446
>>> ks_statistic(np.array([1.0, 2.0, 3.0]), np.array([1.0, 2.0, 3.0]))
0.0
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

PSI_BINS = 10
PSI_FLOOR = 1e-4  # share given to an empty bin so that ln(a/e) stays finite


def psi_from_shares(
    expected: Sequence[float] | np.ndarray, actual: Sequence[float] | np.ndarray
) -> float:
    """Population stability index: sum over bins of (a - e) * ln(a / e).

    ``expected`` are the reference (old) shares, ``actual`` the new ones; empty bins get
    :data:`PSI_FLOOR` so that a bin present on one side only counts instead of dividing by 0.
    """
    e = np.maximum(np.asarray(expected, dtype=np.float64), PSI_FLOOR)
    a = np.maximum(np.asarray(actual, dtype=np.float64), PSI_FLOOR)
    return float(np.sum((a - e) * np.log(a / e)))


def quantile_edges(reference: np.ndarray, bins: int = PSI_BINS) -> np.ndarray:
    """Inner bin edges at the reference's quantiles (deduplicated: ties merge bins)."""
    if len(reference) == 0:
        return np.array([], dtype=np.float64)
    qs = np.quantile(reference, np.linspace(0, 1, bins + 1)[1:-1])
    return np.unique(qs)


def psi_numeric(old: np.ndarray, new: np.ndarray, bins: int = PSI_BINS) -> float | None:
    """PSI of ``new`` against ``old`` over ``bins`` quantile bins of ``old``; None if empty."""
    if len(old) == 0 or len(new) == 0:
        return None
    return psi_sorted(np.sort(old), np.sort(new), bins)


def psi_sorted(old: np.ndarray, new: np.ndarray, bins: int = PSI_BINS) -> float:
    """:func:`psi_numeric` of two sorted, non-empty samples: bin counts by binary search of
    the few bin edges, not of every value."""
    edges = quantile_edges(old, bins)
    cuts_old = np.concatenate([[0], np.searchsorted(old, edges, side="right"), [len(old)]])
    cuts_new = np.concatenate([[0], np.searchsorted(new, edges, side="right"), [len(new)]])
    return psi_from_shares(np.diff(cuts_old) / len(old), np.diff(cuts_new) / len(new))


def ks_statistic(old: np.ndarray, new: np.ndarray) -> float | None:
    """Two-sample Kolmogorov–Smirnov statistic: the largest gap between the two empirical
    distribution functions (as ``scipy.stats.ks_2samp(...).statistic``); None if empty."""
    if len(old) == 0 or len(new) == 0:
        return None
    return ks_sorted(np.sort(old), np.sort(new))


def ks_sorted(a: np.ndarray, b: np.ndarray) -> float:
    """:func:`ks_statistic` of two sorted, non-empty samples: one merge of the two sorted
    runs (a stable sort of their concatenation is linear), then both distribution functions
    counted exactly at the last copy of every distinct value."""
    values = np.concatenate([a, b])
    order = np.argsort(values, kind="stable")
    from_a = np.cumsum(order < len(a))  # values of ``a`` at or before each merged position
    merged = values[order]
    last = np.flatnonzero(np.append(merged[1:] != merged[:-1], True))
    seen_a = from_a[last]
    seen_b = last + 1 - seen_a
    return float(np.max(np.abs(seen_a / len(a) - seen_b / len(b))))


def ks_counts(old: np.ndarray, new: np.ndarray) -> float | None:
    """:func:`ks_statistic` of two samples of small non-negative integers (degrees), from
    their cumulative value counts: linear time, no sort."""
    if len(old) == 0 or len(new) == 0:
        return None
    size = int(max(old.max(), new.max())) + 1
    cdf_a = np.cumsum(np.bincount(old, minlength=size)) / len(old)
    cdf_b = np.cumsum(np.bincount(new, minlength=size)) / len(new)
    return float(np.max(np.abs(cdf_a - cdf_b)))


def share_shift(old: dict[str, int], new: dict[str, int]) -> dict[str, float]:
    """Total variation distance (half the L1 distance of the shares) and PSI of two count maps.

    Both are 0 for equal shares; TVD is at most 1 (disjoint supports).
    """
    keys = sorted(set(old) | set(new))
    n_old, n_new = sum(old.values()), sum(new.values())
    if not keys or n_old == 0 or n_new == 0:
        return {"total_variation": 0.0, "psi": 0.0}
    p = np.array([old.get(k, 0) for k in keys], dtype=np.float64) / n_old
    q = np.array([new.get(k, 0) for k in keys], dtype=np.float64) / n_new
    return {
        "total_variation": float(0.5 * np.abs(p - q).sum()),
        "psi": psi_from_shares(p, q),
    }


def degrees(endpoints: np.ndarray, count: int) -> np.ndarray:
    """Number of edges at each of ``count`` vertices (zeros included)."""
    return np.bincount(endpoints.astype(np.int64, copy=False), minlength=count)


def degree_histogram(degree: np.ndarray) -> dict[int, int]:
    """degree -> number of vertices with it, for degrees >= 1 (for log-log plots)."""
    values, counts = np.unique(degree[degree > 0], return_counts=True)
    return {int(v): int(c) for v, c in zip(values, counts, strict=True)}


def summary(values: np.ndarray) -> dict[str, float | None]:
    """Count, mean, min, max of a numeric sample (None for an empty one)."""
    if len(values) == 0:
        return {"count": 0, "mean": None, "min": None, "max": None}
    return {
        "count": len(values),
        "mean": float(np.mean(values)),
        "min": float(np.min(values)),
        "max": float(np.max(values)),
    }
