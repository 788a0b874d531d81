"""Encoders: exact values against numpy / scipy / Python datetime, fitted on train only."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import pyarrow as pa
import pytest
import scipy.stats
from hypothesis import given, settings
from hypothesis import strategies as st

from graphmill.errors import InputError, SpecError
from graphmill.spec import FeatureSpec
from graphmill.transform import build_bundle
from graphmill.transform._encoders import datetime_parts, datetime_values
from graphmill.transform._features import encode_vertex_features

from ._snapshots import publish, spec_document

UTC = dt.UTC


def feature(prop: str, encoding: str, **options: object) -> FeatureSpec:
    return FeatureSpec("t", prop, encoding, **options)  # type: ignore[arg-type]


def encode(table: pa.Table, features: list[FeatureSpec], fit_rows: np.ndarray | None = None):
    n = table.num_rows
    rows = np.arange(n) if fit_rows is None else fit_rows
    ids = pa.array([f"v{i}" for i in range(n)])
    return encode_vertex_features("t", table, features, rows, ids)


finite = st.floats(-1e6, 1e6, allow_nan=False)


@given(st.lists(st.one_of(finite, st.none()), min_size=2, max_size=40), st.data())
@settings(max_examples=60, deadline=None)
def test_standardize_uses_fitted_rows_only(values: list[float | None], data) -> None:
    n = len(values)
    fit = np.array(sorted(data.draw(st.sets(st.integers(0, n - 1), min_size=1))), dtype=np.int64)
    out = encode(
        pa.table({"a": pa.array(values, pa.float64())}), [feature("a", "standardize")], fit
    )
    column = out.matrix[:, 0].astype(np.float64)
    raw = np.array([np.nan if v is None else v for v in values])
    seen = raw[fit][~np.isnan(raw[fit])]
    mean = seen.mean() if len(seen) else 0.0
    # Population std; a spread at or below 10 float64 epsilons counts as zero and becomes 1
    # (the documented contract; scikit-learn's scalers use the same floor, from memory).
    floor = 10 * np.finfo(np.float64).eps
    std = seen.std() if len(seen) and seen.std() > floor else 1.0
    expected = (np.where(np.isnan(raw), mean, raw) - mean) / std
    np.testing.assert_allclose(column, expected.astype(np.float32), rtol=1e-5, atol=1e-5)
    # Changing the rows outside the fit leaves the statistics, and the fitted rows, as they were.
    others = np.setdiff1d(np.arange(n), fit)
    changed = raw.copy()
    changed[others] = 1e9
    again = encode(pa.table({"a": changed}), [feature("a", "standardize")], fit)
    assert again.encoders[0]["statistics"] == out.encoders[0]["statistics"]
    np.testing.assert_array_equal(again.matrix[fit, 0], out.matrix[fit, 0])


def test_standardize_equals_scipy_zscore_on_the_train_rows() -> None:
    values = np.array([3.0, 7.0, 1.0, 10.0, 4.0, 100.0, -50.0])
    fit = np.array([0, 1, 2, 3, 4])  # rows 5 and 6 play validation / test
    out = encode(pa.table({"a": values}), [feature("a", "standardize", missing="fill")], fit)
    # scipy.stats.zscore: (a - mean) / std with ddof=0 (SciPy reference, scipy.stats.zscore)
    np.testing.assert_allclose(out.matrix[fit, 0], scipy.stats.zscore(values[fit]), rtol=1e-6)
    mean, std = values[fit].mean(), values[fit].std()
    np.testing.assert_allclose(out.matrix[5:, 0], (values[5:] - mean) / std, rtol=1e-6)
    assert out.names == ["a__standardized"]
    stats = out.encoders[0]["statistics"]
    assert stats["mean"] == pytest.approx(5.0) and stats["std"] == pytest.approx(
        np.std([3, 7, 1, 10, 4])
    )


def test_min_max_log_identity_and_constant_columns() -> None:
    values = np.array([2.0, 4.0, 10.0, 0.0])
    table = pa.table({"a": values, "c": [5, 5, 5, 5]})
    out = encode(
        table,
        [
            feature("a", "min-max", missing="fill"),
            feature("a", "log", missing="fill"),
            feature("a", "identity", missing="fill"),
            feature("c", "standardize", missing="fill"),
        ],
        np.array([0, 1, 2]),
    )
    # names say what was done: the log column is also standardized
    assert out.names == ["a__minmax", "a__log__standardized", "a", "c__standardized"]
    np.testing.assert_allclose(out.matrix[:, 0], (values - 2) / 8, rtol=1e-6)  # not clipped
    logs = np.log1p(values)
    np.testing.assert_allclose(
        out.matrix[:, 1], (logs - logs[:3].mean()) / logs[:3].std(), rtol=1e-5
    )
    np.testing.assert_array_equal(out.matrix[:, 2], values)
    np.testing.assert_array_equal(out.matrix[:, 3], 0.0)  # std 0 -> 1, so (5 - 5) / 1


def test_missing_values_get_the_mean_and_an_indicator() -> None:
    table = pa.table({"a": pa.array([1.0, None, 3.0, float("nan"), float("inf")])})
    out = encode(table, [feature("a", "identity")])
    assert out.names == ["a", "a__missing"]
    np.testing.assert_array_equal(out.matrix[:, 1], [0, 1, 0, 1, 1])  # NaN and inf: missing
    np.testing.assert_array_equal(out.matrix[:, 0], [1, 2, 3, 2, 2])  # mean of 1 and 3
    assert out.encoders[0]["missing_values"] == 3


def test_one_hot_vocabulary_unknown_bucket_and_max_categories() -> None:
    values = ["b", "a", "c", "a", "b", "d", None, "zz"]
    fit = np.arange(6)  # "zz" only appears outside the fitted rows
    out = encode(pa.table({"s": values}), [feature("s", "one-hot", max_categories=2)], fit)
    # counts in fit: a 2, b 2, c 1, d 1 -> the two most frequent, ties by value: a, b.
    assert out.names == ["s=a", "s=b", "s=<unknown>", "s__missing"]
    expected = {"a": [1, 0, 0], "b": [0, 1, 0]}
    for row, value in enumerate(values):
        want = expected.get(value, [0, 0, 1])  # c, d (beyond max), None, zz (unseen): unknown
        assert out.matrix[row, :3].tolist() == want, value
    assert out.matrix[:, 3].tolist() == [0, 0, 0, 0, 0, 0, 1, 0]


def test_categories_give_int64_codes_and_no_float_column() -> None:
    out = encode(
        pa.table({"s": ["x", "y", "x", None, "q"]}), [feature("s", "categories")], np.arange(3)
    )
    assert out.names == ["s__missing"]
    assert out.codes["s"].tolist() == [0, 1, 0, 2, 2]
    assert out.codes["s"].dtype == np.int64
    assert out.encoders[0]["statistics"]["vocabulary"] == ["x", "y"]


def test_multi_hot_matches_python_sets() -> None:
    lists = [["red", "blue"], [], None, ["blue", "blue"], ["green"], ["violet", "red"]]
    fit = np.arange(5)
    out = encode(pa.table({"m": pa.array(lists)}), [feature("m", "multi-hot")], fit)
    # frequencies over fitted vertices (each value once per vertex): blue 2, red 1, green 1
    vocabulary = ["blue", "green", "red"]
    assert out.names == [f"m={v}" for v in vocabulary] + ["m=<unknown>", "m__missing"]
    for row, items in enumerate(lists):
        present = set(items or [])
        want = [float(v in present) for v in vocabulary] + [float(bool(present - set(vocabulary)))]
        assert out.matrix[row, :4].tolist() == want, items
    assert out.matrix[:, 4].tolist() == [0, 0, 1, 0, 0, 0]


def test_multi_hot_of_a_single_valued_column_with_missing_values() -> None:
    # each value is a one-element set; a missing value is a missing set (once an IndexError)
    values = ["red", None, "blue", "red"]
    out = encode(pa.table({"s": values}), [feature("s", "multi-hot")])
    # columns in UTF-8 byte order of the values, not by frequency (red is more frequent)
    assert out.names == ["s=blue", "s=red", "s=<unknown>", "s__missing"]
    assert out.matrix.tolist() == [[0, 1, 0, 0], [0, 0, 0, 1], [1, 0, 0, 0], [0, 1, 0, 0]]


def test_boolean_zero_one_and_missing_is_zero() -> None:
    out = encode(pa.table({"b": [True, False, None]}), [feature("b", "boolean")])
    assert out.matrix.tolist() == [[1, 0], [0, 0], [0, 1]]


STAMPS = [
    dt.datetime(2024, 2, 29, 23, 59, 30, tzinfo=UTC),
    dt.datetime(1969, 12, 31, 6, 0, tzinfo=UTC),
    dt.datetime(2000, 1, 1, 0, 0, tzinfo=UTC),
    None,
]


def raw_parts(stamps: list, parts: tuple[str, ...]) -> np.ndarray:
    column = pa.array(stamps, pa.timestamp("us", tz="UTC"))
    return datetime_parts(datetime_values(column), parts)


def test_datetime_parts_equal_python_datetime() -> None:
    parts = ("year", "month", "day", "day_of_week", "hour", "epoch_days")
    raw = raw_parts(STAMPS, parts)
    epoch = dt.datetime(1970, 1, 1, tzinfo=UTC)
    for row, stamp in enumerate(s for s in STAMPS if s is not None):
        # Python: date.weekday() is Monday 0 .. Sunday 6 (Python docs, datetime module).
        want = [stamp.year, stamp.month, stamp.day, stamp.weekday(), stamp.hour]
        want.append((stamp - epoch).total_seconds() / 86400)
        np.testing.assert_allclose(raw[row], want, rtol=1e-12)
    assert np.isnan(raw[3]).all()


def test_datetime_columns_are_standardized_or_on_the_unit_circle() -> None:
    parts = ("year", "month", "day", "day_of_week", "hour", "epoch_days")
    column = pa.array(STAMPS, pa.timestamp("us", tz="UTC"))
    out = encode(pa.table({"d": column}), [feature("d", "datetime", datetime_parts=parts)])
    assert out.names == [
        "d__year__standardized",
        "d__month__sin", "d__month__cos",
        "d__day__sin", "d__day__cos",
        "d__day_of_week__sin", "d__day_of_week__cos",
        "d__hour__sin", "d__hour__cos",
        "d__epoch_days__standardized",
        "d__missing",
    ]  # fmt: skip
    known = [s for s in STAMPS if s is not None]
    epoch = dt.datetime(1970, 1, 1, tzinfo=UTC)
    years = np.array([s.year for s in known], dtype=np.float64)
    days = np.array([(s - epoch).total_seconds() / 86400 for s in known])
    # numpy by hand: z-scores over the three known stamps (ddof 0)
    np.testing.assert_allclose(out.matrix[:3, 0], (years - years.mean()) / years.std(), rtol=1e-5)
    np.testing.assert_allclose(out.matrix[:3, 9], (days - days.mean()) / days.std(), rtol=1e-5)
    for j, (value, origin, period) in enumerate(
        [(lambda s: s.month, 1, 12), (lambda s: s.day, 1, 31),
         (lambda s: s.weekday(), 0, 7), (lambda s: s.hour, 0, 24)]
    ):  # fmt: skip
        angle = np.array([2 * np.pi * (value(s) - origin) / period for s in known])
        np.testing.assert_allclose(out.matrix[:3, 1 + 2 * j], np.sin(angle), atol=1e-6)
        np.testing.assert_allclose(out.matrix[:3, 2 + 2 * j], np.cos(angle), atol=1e-6)
        # the missing stamp gets the fitted mean of each column
        assert out.matrix[3, 1 + 2 * j] == pytest.approx(np.sin(angle).mean(), abs=1e-6)
    assert out.matrix[3, 0] == 0.0 and out.matrix[3, 9] == 0.0 and out.matrix[3, 10] == 1.0
    assert np.abs(out.matrix[:, :10]).max() <= 1.5  # comparable scales, no raw 1969 beside 0/1
    # December is as close to January as January to February (the cycle closes)
    dec_jan = raw_parts([dt.datetime(2020, 12, 1, tzinfo=UTC), dt.datetime(2021, 1, 1, tzinfo=UTC),
                         dt.datetime(2021, 2, 1, tzinfo=UTC)], ("month",))  # fmt: skip
    from graphmill.transform._dates import apply_datetime, fit_datetime

    stats = fit_datetime(dec_jan, ("month",), np.arange(3))
    circle = apply_datetime(dec_jan, stats)
    gaps = np.linalg.norm(np.diff(circle, axis=0), axis=1)
    np.testing.assert_allclose(gaps[0], gaps[1])
    assert stats["columns"] == ["month__sin", "month__cos"]


def test_dates_are_midnight_utc() -> None:
    column = pa.array([dt.date(2021, 3, 14)], pa.date32())
    parts = ("day_of_week", "hour", "epoch_days")
    raw = datetime_parts(datetime_values(column), parts)
    day = dt.date(2021, 3, 14)
    assert raw[0].tolist() == [day.weekday(), 0, (day - dt.date(1970, 1, 1)).days]


def test_iso_text_without_an_offset_is_utc_and_with_one_is_converted() -> None:
    # reference: Python's datetime.fromisoformat; naive text is taken as UTC
    for texts in (
        ["2021-03-14T15:00:00", "2021-03-14T23:30:00"],
        ["2021-03-14T15:00:00+02:00", "2021-03-14T15:00:00Z"],
    ):
        raw = datetime_parts(datetime_values(pa.array(texts)), ("hour",))
        parsed = [dt.datetime.fromisoformat(t) for t in texts]
        want = [(p if p.tzinfo is None else p.astimezone(UTC)).hour for p in parsed]
        assert raw[:, 0].tolist() == want


def test_negative_value_for_log_is_a_one_line_error_naming_the_record() -> None:
    with pytest.raises(InputError) as info:
        encode(pa.table({"a": [1.0, -2.0]}), [feature("a", "log")])
    text = str(info.value)
    assert "\n" not in text and "record v1" in text and "features.t[0]" in text
    assert "negative" in text and "standardize or min-max" in text
    assert "value -2 is negative" in text and "np." not in text  # a number, not a numpy repr


def test_a_string_that_is_no_number_is_named() -> None:
    with pytest.raises(InputError, match=r"record v2.*'twelve' is not a double"):
        encode(pa.table({"a": ["1", "2.5", "twelve", "4"]}), [feature("a", "standardize")])


def test_a_list_column_refuses_one_hot() -> None:
    with pytest.raises(InputError, match=r"several values per vertex.*use multi-hot"):
        encode(pa.table({"m": pa.array([["a"]])}), [feature("m", "one-hot")])


def test_colliding_column_names_are_refused() -> None:
    with pytest.raises(SpecError, match="'s=<unknown>' would appear twice"):
        encode(pa.table({"s": ["<unknown>", "a"]}), [feature("s", "one-hot")])


def test_bundle_fits_encoders_on_the_train_part_only(tmp_path: Path) -> None:
    n = 40
    ages = np.arange(n, dtype=np.float64) * 3.0
    document = spec_document(
        tmp_path,
        {"p": {"properties": {"age": {"kind": "float"}, "group": None}}},
        features={"p": [{"property": "age", "encoding": "standardize", "missing": "fill"}]},
        label={"vertex_type": "p", "property": "group"},
        split={
            "method": "random",
            "seed": 5,
            "fractions": {"train": 0.5, "validation": 0.25, "test": 0.25},
        },
    )
    ids = [f"p{i:02d}" for i in range(n)]
    table = pa.table({"vertex_id": ids, "age": ages, "group": ["g"] * n})
    spec, snapshot = publish(document, {"p": table})
    build_bundle(spec, snapshot)
    from graphmill.bundle import load_bundle

    bundle = load_bundle(spec.output.bundle)
    vertices = bundle.vertex_types["p"]
    train = vertices.parts["train"].numpy()
    held_out = np.concatenate(
        [vertices.parts["validation"].numpy(), vertices.parts["test"].numpy()]
    )
    # 40 hashed vertices: train within ceil(0.05 * 40) = 2 of 20 (split.tolerance).
    assert abs(len(train) - 20) <= 2 and len(train) + len(held_out) == n
    mean, std = ages[train].mean(), ages[train].std()
    assert not np.isclose(mean, ages.mean())  # the draw makes the leak observable
    np.testing.assert_allclose(vertices.features[:, 0].numpy(), (ages - mean) / std, rtol=1e-5)
    stats = bundle.manifest["vertex_types"]["p"]["features"]["encoders"][0]["statistics"]
    assert stats["mean"] == pytest.approx(mean) and stats["fitted_values"] == len(train)


def test_an_outlier_beyond_float32_is_refused_not_turned_into_inf() -> None:
    # float32 max is about 3.4e38 (IEEE 754 binary32); (1e300 - 1.5) / 0.5 exceeds it.
    table = pa.table({"a": [1.0, 2.0, 1e300]})
    with pytest.raises(InputError, match=r"record v2.*beyond the float32 range"):
        encode(table, [feature("a", "standardize")], np.array([0, 1]))


def test_the_loader_names_columns_classes_and_encoders(tmp_path: Path) -> None:
    pytest.importorskip("torch")
    document = spec_document(
        tmp_path,
        {"p": {"properties": {"amount": {"kind": "float"}, "group": None}}},
        features={"p": [{"property": "amount", "encoding": "log", "missing": "fill"}]},
        label={"vertex_type": "p", "property": "group"},
    )
    amounts = np.arange(30, dtype=np.float64)
    table = pa.table(
        {"vertex_id": [f"p{i:02d}" for i in range(30)], "amount": amounts, "group": ["x", "y"] * 15}
    )
    spec, snapshot = publish(document, {"p": table})
    build_bundle(spec, snapshot)
    from graphmill.bundle import load_bundle

    vertices = load_bundle(spec.output.bundle).vertex_types["p"]
    assert vertices.feature_names == ("amount__log__standardized",)
    assert vertices.class_names == ("x", "y")
    (encoder,) = vertices.encoders
    assert (encoder["property"], encoder["encoding"]) == ("amount", "log")
    train = vertices.parts["train"].numpy()
    logs = np.log1p(amounts)
    assert encoder["statistics"]["mean"] == pytest.approx(logs[train].mean())
    assert encoder["statistics"]["std"] == pytest.approx(logs[train].std())
