"""Parts: reproducible, disjoint, covering, proportional within one vertex per class."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from graphmill.transform._labels import class_codes
from graphmill.transform._splits import (
    NO_PART,
    part_flags,
    part_positions,
    part_sizes,
    split_vertices,
)

FRACTIONS = [(0.7, 0.15, 0.15), (0.6, 0.2, 0.2), (0.5, 0.5, 0.0), (0.8, 0.1, 0.1), (1.0, 0, 0)]
label_arrays = st.lists(st.integers(min_value=-1, max_value=4), min_size=0, max_size=120)


@given(label_arrays, st.sampled_from(FRACTIONS), st.integers(0, 2**32), st.booleans())
@settings(max_examples=80, deadline=None)
def test_stratified_parts(labels: list[int], fractions: tuple, seed: int, only: bool) -> None:
    codes = np.array(labels, dtype=np.int64)
    part_of = split_vertices(
        codes, method="stratified", fractions=fractions, seed=seed, only_labeled=only
    )
    again = split_vertices(
        codes, method="stratified", fractions=fractions, seed=seed, only_labeled=only
    )
    assert np.array_equal(part_of, again)  # reproducible with the seed
    candidates = (codes >= 0) if only else np.ones(len(codes), bool)
    assert np.all((part_of >= 0) == candidates)  # covers exactly the candidates, once each
    for stratum in np.unique(codes[candidates]):
        members = part_of[candidates & (codes == stratum)]
        counts = np.bincount(members, minlength=3)
        n = len(members)
        assert counts[0] >= 1  # at least one train vertex per class
        if n * fractions[0] >= 1:  # the train guarantee did not have to step in
            assert np.all(np.abs(counts - n * np.array(fractions)) <= 1 + 1e-9)


@given(label_arrays, st.integers(0, 2**32))
@settings(max_examples=40, deadline=None)
def test_random_parts_cover_all_vertices_when_asked(labels: list[int], seed: int) -> None:
    codes = np.array(labels, dtype=np.int64)
    part_of = split_vertices(
        codes, method="random", fractions=(0.6, 0.2, 0.2), seed=seed, only_labeled=False
    )
    assert np.all(part_of != NO_PART)
    positions = part_positions(part_of)
    flags = part_flags(part_of)
    together = np.concatenate(list(positions.values()))
    assert sorted(together.tolist()) == list(range(len(codes)))  # disjoint and covering
    for name, where in positions.items():
        assert np.all(np.diff(where) > 0)  # sorted
        assert np.array_equal(np.flatnonzero(flags[name]), where)


def test_seeds_change_the_draw_and_the_generator_is_pcg64() -> None:
    codes = np.zeros(200, dtype=np.int64)
    a = split_vertices(codes, method="random", fractions=(0.5, 0.5, 0), seed=1, only_labeled=True)
    b = split_vertices(codes, method="random", fractions=(0.5, 0.5, 0), seed=2, only_labeled=True)
    assert not np.array_equal(a, b)
    # The train part is the first half of numpy's PCG64 permutation for that seed.
    permutation = np.random.Generator(np.random.PCG64(1)).permutation(200)
    assert np.array_equal(np.flatnonzero(a == 0), np.sort(permutation[:100]))


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
