"""The declared-kind gate every source applies (graphmill/connectors/_declared.py)."""

from __future__ import annotations

import datetime as dt

import pyarrow as pa

from graphmill.connectors._declared import apply_declared, ill_typed_text
from graphmill.connectors.gremlin._pages import declared_column
from graphmill.spec import PropertySpec


def test_a_column_of_the_declared_kind_passes():
    column = pa.array([1, None, 3], pa.int64())
    assert apply_declared(column, "integer") == (column, {"integer": 2}, None)


def test_integers_are_accepted_where_float_is_declared():
    column = pa.array([1, 2], pa.int32())
    typed, kinds, raw = apply_declared(column, "float")
    assert typed is column and kinds == {"integer": 2} and raw is None


def test_another_kind_is_ill_typed_with_its_text():
    typed, kinds, raw = apply_declared(pa.array([1.5, None]), "integer")
    assert typed.type == pa.int64() and typed.null_count == 2
    assert kinds == {"ill-typed": 1}
    assert raw.to_pylist() == ["1.5", None]


def test_string_declared_reads_every_value_as_text():
    typed, kinds, raw = apply_declared(pa.array([1, None, 3]), "string")
    assert typed.to_pylist() == ["1", None, "3"] and kinds == {"string": 2} and raw is None


def test_ill_typed_text_is_where_text_did_not_type():
    text = pa.array(["1", "x", None])
    typed = pa.array([1, None, None], pa.int64())
    assert ill_typed_text(text, typed).to_pylist() == [None, "x", None]
    assert ill_typed_text(pa.array(["1"]), pa.array([1])) is None


def test_gremlin_values_of_another_kind_are_ill_typed_per_value():
    age = PropertySpec("age", "age", "integer")
    values = [[30], ["abc"], [], [41.5], [dt.datetime(2020, 1, 2, tzinfo=dt.UTC)]]
    column, kinds, raw = declared_column(values, age)
    assert column.to_pylist() == [30, None, None, None, None]
    assert kinds == {"ill-typed": 3, "integer": 1}
    assert raw.to_pylist() == [None, "abc", None, "41.5", "2020-01-02T00:00:00.000000"]
