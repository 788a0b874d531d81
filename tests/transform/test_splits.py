"""Parts: keyed by the ID hash, disjoint, covering, per-class shares within the tolerance."""

from __future__ import annotations

import hashlib
import math

import numpy as np
import pyarrow as pa
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from graphmill.transform._labels import class_codes
from graphmill.transform._splits import (
    NO_PART,
    achieved_shares,
    part_flags,
    part_positions,
    part_sizes,
    split_vertices,
    stable_unit_interval,
)

FRACTIONS = [(0.7, 0.15, 0.15), (0.6, 0.2, 0.2), (0.5, 0.5, 0.0), (0.8, 0.1, 0.1), (1.0, 0, 0)]
label_arrays = st.lists(st.integers(min_value=-1, max_value=4), min_size=0, max_size=120)


def units_for(n: int, seed: int) -> np.ndarray:
    return stable_unit_interval(pa.array([f"v{i}" for i in range(n)]), seed)


def test_unit_interval_is_keyed_blake2b_of_the_id() -> None:
    ids = ["a", "member-17", "é", ""]
    got = stable_unit_interval(pa.array(ids), 42)
    for value, u in zip(ids, got, strict=True):
        # Outside reference: Python's hashlib BLAKE2b (RFC 7693), keyed with the seed text.
        digest = hashlib.blake2b(value.encode("utf-8"), digest_size=8, key=b"42").digest()
        assert u == (int.from_bytes(digest, "big") >> 11) / 2**53
    assert np.all((got >= 0) & (got < 1))
    assert not np.array_equal(got, stable_unit_interval(pa.array(ids), 43))


@given(label_arrays, st.sampled_from(FRACTIONS), st.integers(0, 2**32), st.booleans(),
       st.sampled_from([0.0, 0.05, 0.2]))  # fmt: skip
@settings(max_examples=80, deadline=None)
def test_stratified_parts(
    labels: list[int], fractions: tuple, seed: int, only: bool, tolerance: float
) -> None:
    codes = np.array(labels, dtype=np.int64)
    units = units_for(len(codes), seed)
    kwargs = {"method": "stratified", "fractions": fractions, "tolerance": tolerance}
    part_of = split_vertices(codes, units, only_labeled=only, **kwargs)
    assert np.array_equal(part_of, split_vertices(codes, units, only_labeled=only, **kwargs))
    candidates = (codes >= 0) if only else np.ones(len(codes), bool)
    assert np.all((part_of >= 0) == candidates)  # covers exactly the candidates, once each
    for stratum in np.unique(codes[candidates]):
        members = part_of[candidates & (codes == stratum)]
        counts = np.bincount(members, minlength=3)
        n = len(members)
        assert counts[0] >= 1  # at least one train vertex per class
        if n * fractions[0] >= 1 + math.ceil(tolerance * n):  # the guarantee did not step in
            # Each boundary within ceil(tolerance * n) of its exact place (one vertex of
            # rounding on top).
            slack = math.ceil(tolerance * n - 1e-9) + 1 + 1e-9
            exact = np.cumsum(n * np.array(fractions))
            assert np.all(np.abs(np.cumsum(counts) - exact) <= slack)


@given(label_arrays, st.integers(0, 2**32))
@settings(max_examples=40, deadline=None)
def test_random_parts_cover_all_vertices_when_asked(labels: list[int], seed: int) -> None:
    codes = np.array(labels, dtype=np.int64)
    part_of = split_vertices(
        codes, units_for(len(codes), seed), method="random", fractions=(0.6, 0.2, 0.2),
        only_labeled=False,
    )  # fmt: skip
    assert np.all(part_of != NO_PART)
    positions = part_positions(part_of)
    flags = part_flags(part_of)
    together = np.concatenate(list(positions.values()))
    assert sorted(together.tolist()) == list(range(len(codes)))  # disjoint and covering
    for name, where in positions.items():
        assert np.all(np.diff(where) > 0)  # sorted
        assert np.array_equal(np.flatnonzero(flags[name]), where)


def test_parts_follow_the_hash_when_within_tolerance() -> None:
    codes = np.zeros(2000, dtype=np.int64)
    units = units_for(2000, 1)
    part_of = split_vertices(
        codes, units, method="random", fractions=(0.5, 0.5, 0), tolerance=0.05, only_labeled=True
    )
    # 2000 draws: the count under 0.5 is binomial(2000, 0.5), far inside 100 of 1000.
    assert np.array_equal(part_of == 0, units < 0.5)
    exact = split_vertices(
        codes, units, method="random", fractions=(0.5, 0.5, 0), tolerance=0, only_labeled=True
    )
    assert np.array_equal(np.flatnonzero(exact == 0), np.sort(np.argsort(units)[:1000]))


def test_achieved_shares_per_class() -> None:
    part_of = np.array([0, 0, 1, 2, 0, -1], dtype=np.int8)
    labels = np.array([0, 0, 0, 0, 1, -1])
    shares = achieved_shares(part_of, labels, ["a", "b"])
    assert shares == {
        "a": {"train": 0.5, "validation": 0.25, "test": 0.25},
        "b": {"train": 1.0, "validation": 0.0, "test": 0.0},
    }


@pytest.mark.parametrize(
    ("counts", "fractions", "expected"),
    [
        # Largest remainder (Hamilton's method), worked by hand: 10 * (.7, .15, .15) =
        # (7, 1.5, 1.5) -> floors (7, 1, 1), one left, ties go to validation first.
        ([10], (0.7, 0.15, 0.15), [[7, 2, 1]]),
        ([3], (0.7, 0.15, 0.15), [[2, 1, 0]]),
        ([1], (0.7, 0.15, 0.15), [[1, 0, 0]]),
        ([7], (0.6, 0.2, 0.2), [[4, 2, 1]]),
        ([0], (0.6, 0.2, 0.2), [[0, 0, 0]]),
    ],
)
def test_part_sizes_rounding_rule(counts: list[int], fractions: tuple, expected: list) -> None:
    assert part_sizes(np.array(counts), fractions).tolist() == expected


def test_class_codes_sort_label_strings_by_bytes() -> None:
    import pyarrow as pa

    codes, names = class_codes(pa.array(["9", "10", None, "é", "E", "9"]))
    assert names == ["10", "9", "E", "é"]
    assert codes.tolist() == [1, 0, -1, 3, 2, 1]
