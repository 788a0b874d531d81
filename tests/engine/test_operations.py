"""Differential, operation by operation: the local engine against the reference engine.

Each operation of ``graphmill.engine.OPERATIONS`` that the local engine runs natively gets
hypothesis-made inputs with the awkward values (non-ASCII IDs, code points whose UTF-16 and
UTF-8 orders differ, NaN, signed zeros, infinities, nulls, lists) and must give exactly what
the reference gives.
"""

from __future__ import annotations

import tempfile
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from graphmill.engine import Engine, open_engine
from graphmill.spec import EngineSpec

# U+FFFD sorts after U+10000 by code point (UTF-8 bytes) but before it in UTF-16 units.
IDS = st.sampled_from(["a", "b", "B", "é", "ä", "\ufffd", "\U00010000", "a\x00", "", "aa"])
FLOATS = st.one_of(
    st.none(), st.sampled_from([0.0, -0.0, 1.0, -1.5, float("nan"), float("inf"), float("-inf")])
)
SETTINGS = settings(max_examples=60, deadline=None)


@pytest.fixture(scope="module")
def engines() -> Iterator[tuple[Engine, Engine]]:
    with (
        open_engine(EngineSpec(kind="reference")) as reference,
        open_engine(EngineSpec(kind="local", threads=2)) as local,
    ):
        yield reference, local


@st.composite
def edge_tables(draw: Any, *, properties: bool = True) -> pa.Table:
    n = draw(st.integers(0, 25))
    columns: dict[str, Any] = {
        "source_id": pa.array(draw(st.lists(IDS, min_size=n, max_size=n)), pa.string()),
        "target_id": pa.array(draw(st.lists(IDS, min_size=n, max_size=n)), pa.string()),
    }
    if properties:
        columns["weight"] = pa.array(draw(st.lists(FLOATS, min_size=n, max_size=n)), pa.float64())
        columns["kind"] = pa.array(
            draw(st.lists(st.sampled_from(["x", "y", None]), min_size=n, max_size=n)), pa.string()
        )
        tags = st.one_of(st.none(), st.lists(st.one_of(st.none(), FLOATS), max_size=2))
        columns["marks"] = pa.array(
            draw(st.lists(tags, min_size=n, max_size=n)), pa.list_(pa.float64())
        )
    return pa.table(columns)


@SETTINGS
@given(st.data())
def test_canonical_order(engines: tuple[Engine, Engine], data: st.DataObject) -> None:
    n = data.draw(st.integers(0, 30))
    table = pa.table(
        {
            "id": pa.array(data.draw(st.lists(IDS, min_size=n, max_size=n)), pa.string()),
            "x": pa.array(data.draw(st.lists(FLOATS, min_size=n, max_size=n)), pa.float64()),
            "k": pa.array(
                data.draw(
                    st.lists(st.one_of(st.none(), st.integers(-2, 2)), min_size=n, max_size=n)
                ),
                pa.int64(),
            ),
            "b": pa.array(
                data.draw(st.lists(st.one_of(st.none(), st.booleans()), min_size=n, max_size=n)),
                pa.bool_(),
            ),
        }
    )
    keys = data.draw(st.permutations(["id", "x", "k", "b"]))
    reference, local = engines
    expected = reference.canonical_order(table, keys)
    assert local.canonical_order(table, keys).tolist() == expected.tolist()


@SETTINGS
@given(st.lists(IDS, max_size=30))
def test_vertex_index(engines: tuple[Engine, Engine], ids: list[str]) -> None:
    reference, local = engines
    column = pa.chunked_array([pa.array(ids, pa.string())])
    assert local.first_rows_by_id(column).tolist() == reference.first_rows_by_id(column).tolist()


@SETTINGS
@given(st.data(), st.lists(IDS, max_size=10, unique=True), st.sampled_from(["source", "target"]))
def test_endpoint_index(
    engines: tuple[Engine, Engine], data: st.DataObject, ids: list[str], side: str
) -> None:
    edges: Any = data.draw(edge_tables(properties=False))
    if data.draw(st.booleans(), label="as a Parquet file"):
        folder = Path(tempfile.mkdtemp())
        pq.write_table(edges, folder / "edges.parquet", row_group_size=4)  # several groups
        edges = folder / "edges.parquet"
    reference, local = engines
    vertices = pa.array(ids, pa.string())
    got = local.endpoint_positions(edges, side, vertices).tolist()
    assert got == reference.endpoint_positions(edges, side, vertices).tolist()


def _same_outcome(got: Any, expected: Any) -> None:
    for name in ("source", "target", "rows"):
        assert getattr(got.edges, name).tolist() == getattr(expected.edges, name).tolist()
    if expected.edges.multiplicity is None:
        assert got.edges.multiplicity is None
    else:
        assert got.edges.multiplicity.tolist() == expected.edges.multiplicity.tolist()
    assert (got.dropped, got.merged, got.added_reverses) == (
        expected.dropped,
        expected.merged,
        expected.added_reverses,
    )


@SETTINGS
@given(
    st.data(),
    st.lists(IDS, max_size=8, unique=True),
    st.lists(IDS, max_size=8, unique=True),
    st.sampled_from(["keep", "drop", "merge"]),
    st.sampled_from(["keep", "drop"]),
    st.booleans(),
)
def test_mapped_edges(
    engines: tuple[Engine, Engine],
    data: st.DataObject,
    sources: list[str],
    targets: list[str],
    duplicates: str,
    self_loops: str,
    symmetrize: bool,
) -> None:
    edges: Any = data.draw(edge_tables(properties=data.draw(st.booleans())))
    if data.draw(st.booleans(), label="as a Parquet file"):
        folder = Path(tempfile.mkdtemp())
        pq.write_table(edges, folder / "edges.parquet", row_group_size=4)  # several groups
        edges = folder / "edges.parquet"
    same_type = data.draw(st.booleans(), label="one vertex type")
    source_ids = pa.array(sorted(sources), pa.string())
    target_ids = source_ids if same_type else pa.array(sorted(targets), pa.string())
    options = {
        "same_type": same_type,
        "duplicates": duplicates,
        "self_loops": self_loops,
        "symmetrize": symmetrize,
    }
    expected, got = (e.mapped_edges(edges, source_ids, target_ids, **options) for e in engines)
    _same_outcome(got, expected)


@SETTINGS
@given(
    st.lists(st.tuples(st.integers(-1, 4), st.integers(-1, 4)), max_size=40),
    st.booleans(),
    st.sampled_from(["keep", "drop", "merge"]),
    st.sampled_from(["keep", "drop"]),
    st.booleans(),
)
def test_edge_policy(
    engines: tuple[Engine, Engine],
    pairs: list[tuple[int, int]],
    same_type: bool,
    duplicates: str,
    self_loops: str,
    symmetrize: bool,
) -> None:
    source = np.array([p[0] for p in pairs], dtype=np.int64)
    target = np.array([p[1] for p in pairs], dtype=np.int64)
    options = {
        "same_type": same_type,
        "vertex_count": 5,
        "duplicates": duplicates,
        "self_loops": self_loops,
        "symmetrize": symmetrize,
    }
    expected, got = (e.edge_policy(source, target, **options) for e in engines)
    _same_outcome(got, expected)


@SETTINGS
@given(st.data(), st.integers(0, 4))
def test_check_operations(engines: tuple[Engine, Engine], data: st.DataObject, k: int) -> None:
    edges: Any = data.draw(edge_tables(properties=data.draw(st.booleans())))
    if data.draw(st.booleans(), label="as a Parquet file"):
        folder = Path(tempfile.mkdtemp())
        pq.write_table(edges, folder / "edges.parquet")
        edges = folder / "edges.parquet"
    sources = pa.array(data.draw(st.lists(IDS, max_size=8)), pa.string())
    targets = pa.array(data.draw(st.lists(IDS, max_size=8)), pa.string())
    reference, local = engines
    calls = [
        ("dangling_edges", (edges, sources, targets, k)),
        ("self_loops", (edges, k)),
        ("repeated_edges", (edges, k)),
        ("parallel_edges", (edges, k)),
        ("reciprocity", (edges,)),
        ("one_way_edges", (edges, k)),
        ("isolated_vertices", (sources, [(edges, "source"), (edges, "target")], k)),
    ]
    for method, args in calls:
        expected = getattr(reference, method)(*args)
        assert getattr(local, method)(*args) == expected, method
