"""The snapshot merge drops a facet value repeated across pages (``distinct_facts``)."""

from __future__ import annotations

import pyarrow as pa

from graphmill.snapshot import distinct_facts

KEY = "graphmill.identity:n"


def test_repeats_of_a_vertex_and_identity_are_kept_once() -> None:
    # rows in canonical order (vertex, value, identity), as canonical_table leaves them
    facts = pa.table(
        {
            "vertex_id": ["a", "a", "a", "a", "b", "b"],
            "n": [7.0, 7.0, 7.0, None, 7.0, 7.0],
            KEY: [
                "float\x1f7",  # 7.0 as xsd:double
                "integer\x1f7",  # "+7"^^xsd:integer, from one page
                "integer\x1f7",  # "7"^^xsd:int, from another: the same value
                "ill-typed\x1fxsd:integer  abc",
                "integer\x1f7",
                "integer\x1f7",
            ],
        }
    )
    kept, kinds = distinct_facts(facts, KEY)
    assert kept.column_names == ["vertex_id", "n"]
    assert kept.column("vertex_id").to_pylist() == ["a", "a", "a", "b"]
    assert kept.column("n").to_pylist() == [7.0, 7.0, None, 7.0]
    assert kinds == {"float": 1, "ill-typed": 1, "integer": 2}


def test_no_rows_and_one_row() -> None:
    empty = pa.table({"vertex_id": pa.array([], pa.string()), KEY: pa.array([], pa.string())})
    assert distinct_facts(empty, KEY)[1] == {}
    one = pa.table({"vertex_id": ["a"], KEY: ["string\x1fx"]})
    assert distinct_facts(one, KEY)[1] == {"string": 1}
