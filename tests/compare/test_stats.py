"""PSI and KS against outside references: scipy's ks_2samp and a published PSI example."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.stats import ks_2samp

from graphmill.compare._stats import (
    ks_counts,
    ks_statistic,
    psi_from_shares,
    psi_numeric,
    quantile_edges,
    share_shift,
)
from graphmill.compare._tables import multiset_overlap

samples = st.lists(st.integers(-20, 20).map(float), min_size=1, max_size=60).map(np.array)


@given(samples, samples)
@settings(max_examples=200, deadline=None)
def test_ks_equals_scipy_ks_2samp(a: np.ndarray, b: np.ndarray) -> None:
    # scipy.stats.ks_2samp(...).statistic, the reference (ties included); the p-value method
    # does not change the statistic, "asymp" only avoids its exact-method warning
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")  # scipy's p-value of degenerate samples warns
        expected = ks_2samp(a, b, method="asymp").statistic
    assert ks_statistic(a, b) == pytest.approx(expected, abs=1e-12)


def test_ks_on_continuous_samples_equals_scipy() -> None:
    rng = np.random.default_rng(3)
    a, b = rng.normal(0, 1, 5000), rng.normal(0.3, 1.2, 4000)
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")  # scipy's p-value of degenerate samples warns
        expected = ks_2samp(a, b, method="asymp").statistic
    assert ks_statistic(a, b) == pytest.approx(expected, abs=1e-12)


def test_psi_on_a_published_worked_example() -> None:
    # GeeksforGeeks, "Population Stability Index (PSI)" (updated 13 Aug 2025): income bins
    # low / medium / high, expected (2020) 0.4 / 0.3 / 0.3, observed (2021) 0.35 / 0.25 / 0.4.
    # Computed by hand here, term by term:
    #   (0.35 - 0.40) ln(0.35/0.40) = -0.05 x -0.133531 = 0.0066766
    #   (0.25 - 0.30) ln(0.25/0.30) = -0.05 x -0.182322 = 0.0091161
    #   (0.40 - 0.30) ln(0.40/0.30) =  0.10 x  0.287682 = 0.0287682
    #   sum = 0.0445609
    assert psi_from_shares([0.4, 0.3, 0.3], [0.35, 0.25, 0.4]) == pytest.approx(0.0445609, abs=1e-6)
    terms = [(0.35 - 0.4) * math.log(0.35 / 0.4), (0.25 - 0.3) * math.log(0.25 / 0.3)]
    terms.append((0.4 - 0.3) * math.log(0.4 / 0.3))
    assert psi_from_shares([0.4, 0.3, 0.3], [0.35, 0.25, 0.4]) == pytest.approx(sum(terms))


def test_psi_of_equal_samples_is_zero_and_grows_with_a_shift() -> None:
    rng = np.random.default_rng(0)
    base = rng.normal(0, 1, 10_000)
    assert psi_numeric(base, base) == pytest.approx(0.0)
    small = psi_numeric(base, rng.normal(0.1, 1, 10_000))
    large = psi_numeric(base, rng.normal(1.0, 1, 10_000))
    assert small is not None and large is not None
    assert small < 0.1 < 0.25 < large  # the usual reading: < 0.1 stable, > 0.25 shifted


def test_psi_bins_are_the_reference_deciles() -> None:
    edges = quantile_edges(np.arange(100, dtype=np.float64))
    assert len(edges) == 9
    counts = np.bincount(np.searchsorted(edges, np.arange(100.0), side="right"))
    assert counts.tolist() == [10] * 10


def test_share_shift_total_variation() -> None:
    assert share_shift({"a": 5, "b": 5}, {"a": 5, "b": 5})["total_variation"] == 0.0
    assert share_shift({"a": 1}, {"b": 7})["total_variation"] == 1.0
    # shares 0.5/0.5 -> 0.75/0.25: half of |0.25| + |0.25|
    assert share_shift({"a": 2, "b": 2}, {"a": 3, "b": 1})["total_variation"] == 0.25


def test_empty_samples_have_no_statistic() -> None:
    assert ks_statistic(np.array([]), np.array([1.0])) is None
    assert psi_numeric(np.array([1.0]), np.array([])) is None


@given(
    st.lists(st.integers(0, 30), min_size=1, max_size=80).map(np.array),
    st.lists(st.integers(0, 30), min_size=1, max_size=80).map(np.array),
)
@settings(max_examples=100, deadline=None)
def test_ks_of_integer_counts_equals_the_general_statistic(a: np.ndarray, b: np.ndarray) -> None:
    assert ks_counts(a, b) == pytest.approx(ks_statistic(a.astype(float), b.astype(float)))


@given(
    st.lists(st.integers(0, 9), max_size=40).map(np.array),
    st.lists(st.integers(0, 9), max_size=40).map(np.array),
)
@settings(max_examples=100, deadline=None)
def test_multiset_overlap_equals_counter_intersection(a: np.ndarray, b: np.ndarray) -> None:
    from collections import Counter

    expected = sum((Counter(a.tolist()) & Counter(b.tolist())).values())
    assert multiset_overlap(a.astype(np.int64), b.astype(np.int64)) == expected
    unique_a, unique_b = np.unique(a).astype(np.int64), np.unique(b).astype(np.int64)
    assert multiset_overlap(unique_a, unique_b) == len(set(a.tolist()) & set(b.tolist()))


@given(
    st.lists(st.integers(0, 60), max_size=50, unique=True).map(sorted).map(np.array),
    st.lists(st.integers(0, 60), max_size=50, unique=True).map(sorted).map(np.array),
    st.integers(1, 7),
)
@settings(max_examples=100, deadline=None)
def test_sets_overlap_block_by_block(a: np.ndarray, b: np.ndarray, block: int) -> None:
    from graphmill.compare import _tables

    old, _tables.BLOCK = _tables.BLOCK, block  # blocks of a few values: many boundaries
    try:
        got = multiset_overlap(a.astype(np.int64), b.astype(np.int64))
    finally:
        _tables.BLOCK = old
    assert got == len(set(a.tolist()) & set(b.tolist()))  # Python sets, the reference


categories = st.lists(st.one_of(st.none(), st.sampled_from(["a", "b", "c", "dé", "€", ""])))


@given(categories, categories)
@settings(max_examples=150, deadline=None)
def test_categorical_drift_equals_a_pandas_recount(old: list, new: list) -> None:
    import pandas as pd
    import pyarrow as pa

    from graphmill.compare._drift import categorical_drift

    got = categorical_drift(
        pa.chunked_array([pa.array(old, pa.string())]),
        pa.chunked_array([pa.array(new, pa.string())]),
    )
    a = pd.Series(old, dtype=object).dropna().value_counts()
    b = pd.Series(new, dtype=object).dropna().value_counts()
    appeared, vanished = sorted(set(b.index) - set(a.index)), sorted(set(a.index) - set(b.index))
    assert got["new_categories"] == appeared and got["new_category_count"] == len(appeared)
    assert got["vanished_categories"] == vanished
    if len(a) and len(b):
        p, q = (a / a.sum()).align(b / b.sum(), fill_value=0.0)
        assert got["total_variation"] == pytest.approx(0.5 * float((p - q).abs().sum()), abs=1e-6)
        ranked = sorted(p.index, key=lambda k: (-abs(q[k] - p[k]), k))[:5]
        assert [s["category"] for s in got["largest_shifts"]] == ranked
    else:
        assert got["total_variation"] == 0.0
