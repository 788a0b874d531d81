"""Vertex indices: byte order of UTF-8 IDs, first row kept, independent of row order."""

from __future__ import annotations

import random

import pyarrow as pa
from hypothesis import given, settings
from hypothesis import strategies as st

from graphmill.transform._indexing import (
    NO_VERTEX,
    first_rows_by_id,
    index_vertices,
    map_endpoints,
)

# Any Unicode scalar value except surrogates (which UTF-8 cannot encode).
ids = st.text(st.characters(exclude_categories=("Cs",)), max_size=6)


def test_order_is_utf8_byte_order_not_code_unit_order() -> None:
    # U+FF61 sorts before U+1F600 by code point and by UTF-8 bytes (EF BD A1 < F0 9F 98 80),
    # but after it in UTF-16 code units (FF61 > D83D): RFC 3629 section 1 notes that UTF-8
    # byte order equals code point order.
    values = ["\U0001f600", "\uff61", "z", "Z", "é", ""]
    table = pa.table({"vertex_id": values})
    index = index_vertices("t", table)
    assert index.ids.to_pylist() == sorted(values, key=lambda s: s.encode("utf-8"))
    assert index.ids.to_pylist().index("\uff61") < index.ids.to_pylist().index("\U0001f600")


@given(st.lists(ids, max_size=40))
@settings(max_examples=60, deadline=None)
def test_first_rows_by_id_matches_a_plain_python_reference(values: list[str]) -> None:
    first: dict[str, int] = {}
    for row, value in enumerate(values):
        first.setdefault(value, row)
    expected = [first[v] for v in sorted(first, key=lambda s: s.encode("utf-8"))]
    assert first_rows_by_id(pa.array(values, pa.string())).tolist() == expected


@given(st.lists(ids, max_size=30), st.randoms(use_true_random=False))
@settings(max_examples=40, deadline=None)
def test_indices_do_not_depend_on_row_order(values: list[str], rnd: random.Random) -> None:
    shuffled = values[:]
    rnd.shuffle(shuffled)
    a = index_vertices("t", pa.table({"vertex_id": pa.array(values, pa.string())}))
    b = index_vertices("t", pa.table({"vertex_id": pa.array(shuffled, pa.string())}))
    assert a.ids.equals(b.ids)
    assert a.duplicates == b.duplicates == len(values) - len(set(values))


def test_duplicates_keep_the_first_row_and_are_counted() -> None:
    table = pa.table({"vertex_id": ["b", "a", "b", "a", "c"], "age": [1, 2, 3, 4, 5]})
    index = index_vertices("t", table)
    assert index.ids.to_pylist() == ["a", "b", "c"]
    assert index.table.column("age").to_pylist() == [2, 1, 5]
    assert index.duplicates == 2


def test_pseudonymized_order_follows_the_pseudonyms() -> None:
    table = pa.table({"vertex_id": ["a", "b", "c"], "n": [1, 2, 3]})
    reverse = {"a": "z3", "b": "z2", "c": "z1"}
    index = index_vertices(
        "t", table, pseudonymize=lambda ids: pa.array([reverse[i] for i in ids.to_pylist()])
    )
    assert index.public_ids.to_pylist() == ["z1", "z2", "z3"]
    assert index.ids.to_pylist() == ["c", "b", "a"]
    assert index.table.column("n").to_pylist() == [3, 2, 1]


def test_endpoints_map_to_positions_and_unknown_ids_to_minus_one() -> None:
    vertices = pa.array(["a", "b", "é"])
    found = map_endpoints(pa.chunked_array([["é", "x"], ["a", "b", ""]]), vertices)
    assert found.tolist() == [2, NO_VERTEX, 0, 1, NO_VERTEX]
    assert found.dtype.name == "int64"
