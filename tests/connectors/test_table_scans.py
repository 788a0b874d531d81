"""Parquet table files read straight into the snapshot (no staged copy) on the local engine.

Differential: the reference engine stages every file page by page (typing, the gate, the
staged merge); the local engine reads eligible files in one DuckDB query
(``graphmill/connectors/_table_scans.py``). Both must publish byte-identical snapshots, on
hypothesis-made files with every accepted column type, selectors, several files per table,
empty text, nulls, -0.0 and NaN; files the scan cannot take (text under a numeric kind) are
staged on both; bad files get the same error on both.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path
from typing import Any

import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from graphmill.connectors import open_source
from graphmill.errors import InputError
from graphmill.snapshot import pull
from graphmill.spec import EngineSpec, spec_from_dict

ENGINES = ("reference", "local")


def document(root: Path, files: dict[str, str], props: dict[str, Any]) -> dict[str, Any]:
    return {
        "spec_version": 1,
        "source": {
            "kind": "table-files",
            "vertex_files": [
                {"path": files["people"], "id_column": "ref", "type_column": "kind"},
                {"path": files["shops"], "id_column": "ref", "type": "shop"},
            ],
            "edge_files": [
                {"path": f, "source_column": "a", "target_column": "b", "relation": "likes"}
                for f in files["likes"]
            ],
        },
        "vertex_types": {
            "person": {"match": "p", "properties": props},
            "shop": {"properties": {"region": {"kind": "string"}}},
        },
        "relations": [
            {
                "from": "person",
                "name": "likes",
                "to": "shop",
                "properties": {"weight": {"kind": "float"}},
            }
        ],
        "output": {"bundle": str(root / "bundle"), "snapshot": str(root / "snapshot")},
    }


def pulled(root: Path, doc: dict[str, Any], kind: str) -> tuple[dict[str, bytes], int]:
    """Every file of the snapshot pulled on engine ``kind`` (by relative path), and the
    number of staged pages."""
    out = root / kind
    doc = {**doc, "output": {"bundle": str(out / "bundle"), "snapshot": str(out / "snapshot")}}
    spec = spec_from_dict(doc, base_dir=root)
    spec = dataclasses.replace(spec, engine=EngineSpec(kind=kind))
    info = pull(spec, open_source(spec))
    files = sorted(p for p in spec.output.snapshot.rglob("*") if p.is_file())
    return {str(p.relative_to(out)): p.read_bytes() for p in files}, info.pages_read


def outcome(root: Path, doc: dict[str, Any], kind: str) -> tuple[Any, int]:
    try:
        return pulled(root, doc, kind)
    except InputError as exc:
        return exc.one_line(), -1


NUMBERS = st.sampled_from([0.0, -0.0, 1.5, float("nan"), float("inf"), None, 2.0])
TEXT = st.sampled_from(["", "a", "b", "é", "\U00010000", "\ufffd", None])


@st.composite
def tables(draw: st.DrawFn) -> dict[str, Any]:
    n = draw(st.integers(1, 12))
    ids = st.sampled_from(["p1", "p2", "p10", "é", "\U00010000", "\ufffd"])
    id_type = draw(st.sampled_from([pa.string(), pa.large_string(), pa.int32()]))
    if pa.types.is_integer(id_type):
        ids = st.sampled_from(["1", "2", "-3", "10"])

    def id_array(values: list[str]) -> pa.Array:
        return pa.array(values).cast(id_type)

    people = pa.table(
        {
            "ref": id_array(draw(st.lists(ids, min_size=n, max_size=n))),
            "kind": pa.array(
                draw(st.lists(st.sampled_from(["p", "q", "shop", None]), min_size=n, max_size=n)),
                pa.string(),
            ),
            "age": pa.array(
                draw(st.lists(st.one_of(st.none(), st.integers(0, 9)), min_size=n, max_size=n)),
                draw(st.sampled_from([pa.int64(), pa.int8(), pa.uint32()])),
            ),
            "score": pa.array(
                draw(st.lists(NUMBERS, min_size=n, max_size=n)),
                draw(st.sampled_from([pa.float64(), pa.float32()])),
            ),
            "tier": pa.array(draw(st.lists(TEXT, min_size=n, max_size=n)), pa.string()),
            "region": pa.array(draw(st.lists(TEXT, min_size=n, max_size=n)), pa.string()),
            "ok": pa.array(
                draw(st.lists(st.sampled_from([True, False, None]), min_size=n, max_size=n)),
                pa.bool_(),
            ),
        }
    )
    if draw(st.booleans()):
        people = people.set_column(4, "tier", people.column("tier").dictionary_encode())
    edges = []
    for _ in range(draw(st.integers(1, 3))):
        m = draw(st.integers(0, 10))
        edges.append(
            pa.table(
                {
                    "a": id_array(draw(st.lists(ids, min_size=m, max_size=m))),
                    "b": pa.array(
                        draw(
                            st.lists(st.sampled_from(["s1", "s2", "s10"]), min_size=m, max_size=m)
                        ),
                        pa.string(),
                    ),
                    "weight": pa.array(
                        draw(st.lists(NUMBERS, min_size=m, max_size=m)), pa.float64()
                    ),
                }
            )
        )
    return {"people": people, "likes": edges, "row_group": draw(st.sampled_from([2, 5, 100]))}


def write(root: Path, graph: dict[str, Any]) -> dict[str, Any]:
    size = graph["row_group"]
    pq.write_table(graph["people"], root / "people.parquet", row_group_size=size)
    shops = pa.table({"ref": ["s2", "s1", "s10"], "region": ["n", "", None]})
    pq.write_table(shops, root / "shops.parquet")
    likes = []
    for i, table in enumerate(graph["likes"]):
        pq.write_table(table, root / f"likes{i}.parquet", row_group_size=size)
        likes.append(f"likes{i}.parquet")
    return {"people": "people.parquet", "shops": "shops.parquet", "likes": likes}


PROPS = {
    "age": {"kind": "integer"},
    "score": {"kind": "float"},
    "tier": {"kind": "string"},
    "ok": {"kind": "boolean"},
}


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(tables())
def test_scanned_snapshots_equal_staged_ones(tmp_path_factory: Any, graph: Any) -> None:
    root = tmp_path_factory.mktemp("scan")
    doc = document(root, write(root, graph), PROPS)
    staged, pages = pulled(root, doc, "reference")
    scanned, none = pulled(root, doc, "local")
    assert pages > 0 and none == 0  # the local engine staged nothing
    assert scanned.keys() == staged.keys()
    for name in staged:
        assert scanned[name] == staged[name], name


def test_ages_under_float_and_no_kind_stay_integers(tmp_path: Path) -> None:
    graph = {
        "people": pa.table(
            {
                "ref": ["p1", "p2"],
                "kind": ["p", "p"],
                "age": [3, None],
                "score": [1.0, -0.0],
                "tier": ["x", ""],
                "ok": [True, None],
                "region": ["n", "s"],
            }
        ),
        "likes": [pa.table({"a": ["p1"], "b": ["s1"], "weight": [0.5]})],
        "row_group": 100,
    }
    props = {"age": {"kind": "float"}, "score": None, "tier": {"kind": "string"}, "ok": None}
    doc = document(tmp_path, write(tmp_path, graph), props)
    staged, _ = pulled(tmp_path, doc, "reference")
    scanned, pages = pulled(tmp_path, doc, "local")
    assert scanned == staged and pages == 0


def test_text_under_a_numeric_kind_is_staged_on_every_engine(tmp_path: Path) -> None:
    graph = {
        "people": pa.table(
            {
                "ref": ["p1", "p2"],
                "kind": ["p", "p"],
                "age": ["3", "x"],
                "score": [1.0, 2.0],
                "tier": ["a", "b"],
                "ok": [True, False],
                "region": ["n", "s"],
            }
        ),
        "likes": [pa.table({"a": ["p1"], "b": ["s1"], "weight": [0.5]})],
        "row_group": 100,
    }
    doc = document(tmp_path, write(tmp_path, graph), PROPS)
    staged, _ = pulled(tmp_path, doc, "reference")
    scanned, pages = pulled(tmp_path, doc, "local")
    assert scanned == staged
    assert any(name.startswith("snapshot/ill_typed/") for name in scanned)  # "x" kept
    assert pages == 1  # the people file only: the others were scanned


@pytest.mark.parametrize("bad", [None, ""])
@pytest.mark.parametrize("column", ["a", "b"])
def test_a_missing_id_is_named_by_row_on_every_engine(tmp_path: Path, bad: Any, column: str):
    likes = pa.table({"a": ["p1", "p2", "p1"], "b": ["s1", "s2", "s1"], "weight": [1.0] * 3})
    likes = likes.set_column(
        likes.schema.get_field_index(column), column, pa.array(["p1", bad, "p2"])
    )
    graph = {
        "people": pa.table(
            {
                "ref": ["p1"],
                "kind": ["p"],
                "age": [1],
                "score": [1.0],
                "tier": ["a"],
                "ok": [True],
                "region": ["n"],
            }
        ),
        "likes": [likes],
        "row_group": 100,
    }
    doc = document(tmp_path, write(tmp_path, graph), PROPS)
    errors = {kind: outcome(tmp_path, doc, kind)[0] for kind in ENGINES}
    assert errors["local"] == errors["reference"]
    assert f"column '{column}' is empty in data row 2" in errors["local"]
    assert "likes0.parquet" in errors["local"]
