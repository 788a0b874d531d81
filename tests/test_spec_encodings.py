"""The spec's table of which encoding fits which declared kind, checked against the encoders.

``graphmill/_spec_targets.py`` refuses at load an encoding that cannot apply to a property's
declared kind. Here each (encoding, kind) pair runs through the real encoder
(``graphmill.transform._features.encode_feature``) on typical values of that kind: a pair the
table allows must encode, a pair it refuses must fail in the encoder too.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pyarrow as pa
import pytest

from graphmill._spec_targets import ALL_KINDS, ENCODING_KINDS, MULTI_VALUED_ENCODINGS
from graphmill.spec import FeatureSpec
from graphmill.transform._encoders import BadValue
from graphmill.transform._features import encode_feature

UTC = dt.UTC
TYPICAL = {
    "integer": pa.array([1, 5, 3], pa.int64()),
    "float": pa.array([0.5, 1.5, 2.5], pa.float64()),
    "boolean": pa.array([True, False, True]),
    "string": pa.array(["red", "blue", "red"]),
    "datetime": pa.array(
        [dt.datetime(2024, 1, 2, tzinfo=UTC), dt.datetime(2025, 6, 7, 8, tzinfo=UTC), None],
        pa.timestamp("us", tz="UTC"),
    ),
    "date": pa.array([dt.date(2024, 1, 2), dt.date(2025, 6, 7), None], pa.date32()),
}
#: The datetime encoding takes text only as ISO 8601 (documented in _encoders.datetime_values).
ISO_TEXT = pa.array(["2024-01-02T00:00:00", "2025-06-07T08:00:00", None])


def _encode(encoding: str, column: pa.Array) -> None:
    feature = FeatureSpec(vertex_type="t", property="p", encoding=encoding)
    encode_feature(feature, column, np.arange(len(column)))


def test_the_table_covers_every_encoding_and_kind_of_the_schema():
    from graphmill._schemas import load_schema

    defs = load_schema("spec")["$defs"]
    assert set(ENCODING_KINDS) == set(defs["feature"]["properties"]["encoding"]["enum"])
    assert set(ALL_KINDS) == set(defs["property"]["properties"]["kind"]["enum"]) == set(TYPICAL)


@pytest.mark.parametrize("kind", sorted(TYPICAL))
@pytest.mark.parametrize("encoding", sorted(ENCODING_KINDS))
def test_the_table_agrees_with_the_encoders(encoding, kind):
    column = ISO_TEXT if (encoding, kind) == ("datetime", "string") else TYPICAL[kind]
    if kind in ENCODING_KINDS[encoding]:
        _encode(encoding, column)
    else:
        with pytest.raises(BadValue):
            _encode(encoding, column)


@pytest.mark.parametrize("encoding", sorted(ENCODING_KINDS))
def test_only_multi_valued_encodings_take_lists(encoding):
    lists = pa.array([["a", "b"], ["c"], None], pa.list_(pa.string()))
    if encoding in MULTI_VALUED_ENCODINGS:
        _encode(encoding, lists)
    else:
        with pytest.raises(BadValue):
            _encode(encoding, lists)
