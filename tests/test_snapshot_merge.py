"""The streamed canonical merge writes the bytes the in-memory merge writes, on every engine."""

from __future__ import annotations

import tempfile
from pathlib import Path
from typing import Any

import pyarrow as pa
import pyarrow.parquet as pq
from hypothesis import given, settings
from hypothesis import strategies as st

from graphmill._snapshot_merge import merge_plan, merge_to_file, write_batches
from graphmill.engine import open_engine
from graphmill.snapshot import canonical_table
from graphmill.spec import EngineSpec, PropertySpec

IDS = st.sampled_from(["a", "b", "B", "é", "\ufffd", "\U00010000", "a\x00", ""])
FLOATS = st.one_of(st.none(), st.sampled_from([0.0, -0.0, 1.5, float("nan"), float("-inf")]))
OPTIONS: dict[str, Any] = {"compression": "zstd", "row_group_size": 3}  # many row groups


@settings(max_examples=30, deadline=None)
@given(st.lists(IDS, max_size=40), st.lists(st.integers(1, 9), min_size=1, max_size=6))
def test_batches_are_cut_as_write_table_cuts_a_table(ids: list[str], sizes: list[int]) -> None:
    table = pa.table({"vertex_id": pa.array(ids, pa.string())})
    folder = Path(tempfile.mkdtemp())
    pq.write_table(table.combine_chunks(), folder / "whole.parquet", **OPTIONS)
    batches, at = [], 0
    while at < len(ids):  # uneven batches, as an engine streams them
        n = sizes[len(batches) % len(sizes)]
        batches.append(table.slice(at, n).to_batches()[0])
        at += n
    rows = write_batches(batches, table.schema, folder / "streamed.parquet", OPTIONS)
    assert rows == len(ids)
    assert (folder / "streamed.parquet").read_bytes() == (folder / "whole.parquet").read_bytes()


@settings(max_examples=30, deadline=None)
@given(st.data())
def test_merge_matches_the_in_memory_merge_on_every_engine(data: st.DataObject) -> None:
    folder = Path(tempfile.mkdtemp())
    parts = []
    for i in range(data.draw(st.integers(1, 4))):
        n = data.draw(st.integers(0, 12))
        part = pa.table(
            {
                "source_id": pa.array(
                    data.draw(st.lists(IDS, min_size=n, max_size=n)), pa.string()
                ),
                "target_id": pa.array(
                    data.draw(st.lists(IDS, min_size=n, max_size=n)), pa.string()
                ),
                "weight": pa.array(
                    data.draw(st.lists(FLOATS, min_size=n, max_size=n)), pa.float64()
                ),
            }
        )
        parts.append(folder / f"part-{i}.parquet")
        pq.write_table(part, parts[-1])
    declared = [PropertySpec("weight", "weight", "float")]
    ids = ["source_id", "target_id"]
    plan = merge_plan(parts, ids, ["weight"])
    assert plan is not None
    schema, kinds = plan
    table, expected_kinds = canonical_table([pq.read_table(p) for p in parts], ids, declared)
    assert kinds == expected_kinds and schema == table.schema
    pq.write_table(table, folder / "in-memory.parquet", **OPTIONS)
    expected = (folder / "in-memory.parquet").read_bytes()
    for kind in ("reference", "local"):
        with open_engine(EngineSpec(kind=kind, threads=2)) as engine:
            merge_to_file(engine, parts, schema, folder / f"{kind}.parquet", OPTIONS)
        assert (folder / f"{kind}.parquet").read_bytes() == expected, kind


def test_parts_of_different_types_are_merged_in_memory(tmp_path: Path) -> None:
    pq.write_table(pa.table({"vertex_id": ["a"], "n": pa.array([1], pa.int64())}), tmp_path / "1")
    pq.write_table(pa.table({"vertex_id": ["b"], "n": pa.array([1.5])}), tmp_path / "2")
    assert merge_plan([tmp_path / "1", tmp_path / "2"], ["vertex_id"], ["n"]) is None
    assert merge_plan([tmp_path / "1"], ["vertex_id"], ["n", "absent"]) is None
