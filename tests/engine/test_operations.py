"""Differential, operation by operation: the local and spark engines against the reference.

Each operation of ``graphmill.engine.OPERATIONS`` that an engine runs natively gets
hypothesis-made inputs with the awkward values (non-ASCII IDs, code points whose UTF-16 and
UTF-8 orders differ, NaN, signed zeros, infinities, nulls, lists) and must give exactly what
the reference gives. Spark runs fewer examples (each costs a few Spark jobs).
"""

from __future__ import annotations

import tempfile
from collections.abc import Callable, Iterator
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
EXAMPLES = {"local": 60, "spark": 4}
DATA = st.data()  # stands for the test's own draws


@pytest.fixture
def engines(engine_settings: EngineSpec) -> Iterator[tuple[Engine, Engine]]:
    """The reference and the engine under test (local, or spark on a real local Spark)."""
    with (
        open_engine(EngineSpec(kind="reference")) as reference,
        open_engine(engine_settings) as other,
    ):
        yield reference, other


def examples(engines: tuple[Engine, Engine], *strategies: Any) -> Callable[..., None]:
    """Run the decorated body on hypothesis-made arguments, as many examples as the engine
    under test affords: ``body(reference, other, *drawn)``."""

    def run(body: Callable[..., None]) -> None:
        @settings(max_examples=EXAMPLES[engines[1].kind], deadline=None, database=None)
        @given(st.data())
        def drawn(data: st.DataObject) -> None:
            args = [data if s is DATA else data.draw(s) for s in strategies]
            body(*engines, *args)

        drawn()

    return run


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


def test_canonical_order(engines: tuple[Engine, Engine]) -> None:
    @examples(engines, DATA)
    def _(reference: Engine, other: Engine, data: st.DataObject) -> None:
        n = data.draw(st.integers(0, 30))

        def column(values: Any) -> list[Any]:
            return data.draw(st.lists(values, min_size=n, max_size=n))

        table = pa.table(
            {
                "id": pa.array(column(IDS), pa.string()),
                "x": pa.array(column(FLOATS), pa.float64()),
                "k": pa.array(column(st.one_of(st.none(), st.integers(-2, 2))), pa.int64()),
                "b": pa.array(column(st.one_of(st.none(), st.booleans())), pa.bool_()),
            }
        )
        keys = data.draw(st.permutations(["id", "x", "k", "b"]))
        expected = reference.canonical_order(table, keys)
        assert other.canonical_order(table, keys).tolist() == expected.tolist()


def test_utf8_byte_order_on_every_engine(engines: tuple[Engine, Engine]) -> None:
    """Non-ASCII and astral IDs sort as Python's ``sorted`` on their UTF-8 bytes."""
    ids = ["z", "Z", "é", "e\u0301", "ﬃ", "\ufffd", "\U00010000", "😀", "\U0010ffff", "a\x00", ""]
    by_bytes = sorted(range(len(ids)), key=lambda i: ids[i].encode("utf-8"))
    table = pa.table({"id": pa.array(ids, pa.string())})
    for engine in engines:
        assert engine.canonical_order(table, ["id"]).tolist() == by_bytes, engine.kind
        first = engine.first_rows_by_id(pa.chunked_array([table.column(0)]))
        assert first.tolist() == by_bytes, engine.kind


def test_vertex_index(engines: tuple[Engine, Engine]) -> None:
    @examples(engines, st.lists(IDS, max_size=30))
    def _(reference: Engine, other: Engine, ids: list[str]) -> None:
        column = pa.chunked_array([pa.array(ids, pa.string())])
        assert (
            other.first_rows_by_id(column).tolist() == reference.first_rows_by_id(column).tolist()
        )


def test_endpoint_index(engines: tuple[Engine, Engine]) -> None:
    @examples(
        engines,
        DATA,
        st.lists(IDS, max_size=10, unique=True),
        st.sampled_from(["source", "target"]),
    )
    def _(reference: Engine, other: Engine, data: st.DataObject, ids: list[str], side: str) -> None:
        edges: Any = data.draw(edge_tables(properties=False))
        if data.draw(st.booleans(), label="as a Parquet file"):
            folder = Path(tempfile.mkdtemp())
            pq.write_table(edges, folder / "edges.parquet", row_group_size=4)  # several groups
            edges = folder / "edges.parquet"
        vertices = pa.array(ids, pa.string())
        got = other.endpoint_positions(edges, side, vertices).tolist()
        assert got == reference.endpoint_positions(edges, side, vertices).tolist()


def test_edge_policy(engines: tuple[Engine, Engine]) -> None:
    @examples(
        engines,
        st.lists(st.tuples(st.integers(-1, 4), st.integers(-1, 4)), max_size=40),
        st.booleans(),
        st.sampled_from(["keep", "drop", "merge"]),
        st.sampled_from(["keep", "drop"]),
        st.booleans(),
    )
    def _(
        reference: Engine,
        other: Engine,
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
        expected, got = (e.edge_policy(source, target, **options) for e in (reference, other))
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


def test_check_operations(engines: tuple[Engine, Engine]) -> None:
    @examples(engines, DATA, st.integers(0, 4))
    def _(reference: Engine, other: Engine, data: st.DataObject, k: int) -> None:
        edges: Any = data.draw(edge_tables(properties=data.draw(st.booleans())))
        if data.draw(st.booleans(), label="as a Parquet file"):
            folder = Path(tempfile.mkdtemp())
            pq.write_table(edges, folder / "edges.parquet")
            edges = folder / "edges.parquet"
        sources = pa.array(data.draw(st.lists(IDS, max_size=8)), pa.string())
        targets = pa.array(data.draw(st.lists(IDS, max_size=8)), pa.string())
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
            assert getattr(other, method)(*args) == expected, method


def test_vertex_id_operations(engines: tuple[Engine, Engine]) -> None:
    """``duplicate-vertex-ids`` on one type and ``shared-vertex-ids`` over up to 3 types,
    IDs repeated within and across types (chunked columns, as a snapshot's are)."""

    @examples(engines, st.lists(st.lists(IDS, max_size=12), max_size=3), st.integers(0, 4))
    def _(reference: Engine, other: Engine, types: list[list[str]], k: int) -> None:
        columns = {f"t{i}": pa.chunked_array([ids], pa.string()) for i, ids in enumerate(types)}
        for column in columns.values():
            expected = reference.duplicate_vertex_ids(column, k)
            assert other.duplicate_vertex_ids(column, k) == expected
        assert other.shared_vertex_ids(columns, k) == reference.shared_vertex_ids(columns, k)


def test_canonical_order_of_other_key_types(engines: tuple[Engine, Engine]) -> None:
    """Keys of every type a staged table may hold, including those Spark cannot hold as they
    are (unsigned 64-bit, nanoseconds): the same order as the reference."""
    import datetime as dt
    from decimal import Decimal

    day = dt.date(2026, 12, 2)
    table = pa.table(
        {
            "u": pa.array([2**64 - 1, 1, 2**63, 1], pa.uint64()),
            "ns": pa.array([3, 1, 2, 1], pa.timestamp("ns")),
            "us": pa.array([5, None, 5, -1], pa.timestamp("us", tz="UTC")),
            "d": pa.array([day, day, None, dt.date(1970, 1, 1)], pa.date32()),
            "dec": pa.array([Decimal("1.10"), Decimal("-2.00"), None, Decimal("1.10")]),
            "bin": pa.array([b"\xff", b"\x00", b"\x7f", b"\x80"], pa.binary()),
            "big": pa.array(["é", "e", "😀", "e"], pa.large_string()),
        }
    )
    reference, other = engines
    for keys in (["u", "ns"], ["us", "d", "dec"], ["bin"], ["big", "d"], ["dec", "us", "big"]):
        expected = reference.canonical_order(table, keys).tolist()
        assert other.canonical_order(table, keys).tolist() == expected, keys


def test_mapped_edges(engines: tuple[Engine, Engine]) -> None:
    @examples(
        engines,
        DATA,
        st.lists(IDS, max_size=8, unique=True),
        st.lists(IDS, max_size=8, unique=True),
        st.sampled_from(["keep", "drop", "merge"]),
        st.sampled_from(["keep", "drop"]),
        st.booleans(),
    )
    def _(
        reference: Engine,
        other: Engine,
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
        expected, got = (
            e.mapped_edges(edges, source_ids, target_ids, **options) for e in (reference, other)
        )
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
