"""Pure rule functions on their own: edge cases the graph cases do not reach."""

from __future__ import annotations

import math

import pyarrow as pa
import pytest

from graphmill.validate._context import sorted_sample
from graphmill.validate.rules import (
    class_sizes,
    count_in_range,
    kind_mix,
    minority_count,
    non_finite_mask,
    null_mask,
    out_of_range_mask,
    pair_codes,
    reciprocity_counts,
    unexpected_kind_count,
)


def test_sample_skips_repeats_of_the_smallest_rows():
    records = pa.table(
        {"source_id": ["a"] * 10 + ["b", "a", "c"], "target_id": ["b"] * 10 + ["a", "c", "a"]}
    )
    assert sorted_sample(records, 3) == [
        {"source_id": "a", "target_id": "b"},
        {"source_id": "a", "target_id": "c"},
        {"source_id": "b", "target_id": "a"},
    ]
    assert sorted_sample(records, 0) == []
    assert len(sorted_sample(records, 100)) == 4


@pytest.mark.parametrize(
    ("profile", "mix", "minority"),
    [
        ({}, "none", 0),
        ({"null": 4}, "none", 0),
        ({"integer": 3}, "single", 0),
        ({"integer": 3, "float": 1}, "numeric", 1),
        ({"integer": 3, "string": 1, "null": 9}, "mixed", 1),
        ({"integer": 3, "ill-typed": 2}, "single", 0),
        ({"string": 2, "boolean": 2, "date": 1}, "mixed", 3),  # tie: boolean is kept
    ],
)
def test_kind_mix(profile, mix, minority):
    assert kind_mix(profile) == mix
    assert minority_count(profile) == minority


def test_unexpected_kinds():
    assert unexpected_kind_count({"integer": 2, "float": 3}, "float") == 0
    assert unexpected_kind_count({"integer": 2, "float": 3}, "integer") == 3
    assert unexpected_kind_count({"date": 2, "ill-typed": 1}, "date") == 1
    assert unexpected_kind_count({"string": 5, "ill-typed": 1}, None) == 1


def test_masks_over_nulls_lists_and_nan():
    assert null_mask(pa.array([[1], [], None, [None]])).to_pylist() == [False, True, True, False]
    values = pa.array([1.0, math.nan, None, math.inf, -math.inf])
    assert non_finite_mask(values).to_pylist() == [False, True, False, True, True]
    assert non_finite_mask(pa.array([1, None])).to_pylist() == [False, False]
    # IEEE 754: NaN compares false, so it is never out of range (non-finite-number has it)
    assert out_of_range_mask(values, 0, 10).to_pylist() == [False, False, False, True, True]
    assert out_of_range_mask(values, None, None).to_pylist() == [False] * 5


def test_class_sizes_ignore_missing_labels():
    sizes = class_sizes(pa.array(["x", None, "x", "y"])).sort_by("class").to_pylist()
    assert sizes == [{"class": "x", "members": 2}, {"class": "y", "members": 1}]


def test_count_ranges_are_inclusive():
    assert count_in_range(5, {"min": 5, "max": 5})
    assert not count_in_range(4, {"min": 5})
    assert not count_in_range(6, {"max": 5})
    assert count_in_range(0, {})


def test_pair_codes_share_one_dictionary_and_decode():
    sources, targets = pa.array(["a", "b", "a"]), pa.array(["b", "a", "a"])
    codes = pair_codes(sources, targets)
    decoded = codes.decode(codes.keys)
    assert decoded[0].to_pylist() == ["a", "b", "a"] and decoded[1].to_pylist() == ["b", "a", "a"]
    # (a,b) and (b,a) reciprocate each other; (a,a) is a pair that never counts as reciprocated
    assert reciprocity_counts(sources, targets, codes=codes) == (2, 3)
