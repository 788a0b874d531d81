"""Typing of CSV text: the one-pattern fast path agrees with the five-pattern rule."""

from __future__ import annotations

import pyarrow as pa
import pyarrow.compute as pc
from hypothesis import given, settings
from hypothesis import strategies as st

from graphmill.connectors import _lexical

POOL = [
    "7",
    "+7",
    "-0",
    "99999999999999999999",
    "1.5",
    ".5",
    "1e3",
    "inf",
    "NaN",
    "true",
    "FALSE",
    "2020-02-29",
    "2021-02-29",
    "0000-01-01",
    "2020-01-02T03:04:05Z",
    "2020-01-02 03:04",
    "2021-02-30T00:00:00+01:00",
    "2020-01-02T03:04:05.1234567-0130",
    "red",
    "",
    " 7",
]
KINDS = ["integer", "float", "boolean", "date", "datetime"]


@settings(max_examples=200, deadline=None)
@given(st.lists(st.sampled_from(POOL) | st.none(), max_size=12), st.sampled_from(KINDS))
def test_declared_masks_agree_with_kind_masks(cells, kind):
    values = _lexical.blank_to_null(pa.array(cells, pa.string()))
    fast = _lexical._declared_masks(values, kind)
    full = _lexical.kind_masks(values)
    if fast is not None:
        assert {k: m.to_pylist() for k, m in fast.items()} == {
            k: m.to_pylist() for k, m in full.items()
        }
    parsed, counts = _lexical.typed_values(values, kind)
    assert sum(counts.values()) == len(values) - values.null_count
    # a value is parsed exactly when its text has the declared kind and a value of it
    assert parsed.null_count == len(values) - counts.get(kind, 0) - (
        counts.get("integer", 0) if kind == "float" else 0
    )
    # a missing cell stays missing
    assert not pc.any(pc.and_(pc.is_null(values), pc.is_valid(parsed))).as_py()
