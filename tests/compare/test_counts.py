"""Comparison counts against independent recounts with pandas set operations, on
hypothesis-generated pairs of graph versions; the index map round-trips."""

from __future__ import annotations

import tempfile
from pathlib import Path
from typing import Any

import pandas as pd
import pyarrow.parquet as pq
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from graphmill import compare_bundles
from graphmill.compare import _tables
from tests.compare._versions import build_version

POOL = [f"p{i}" for i in range(12)] + ["ü", "€x"]
PLACES = ["home", "park", "shop", "zoo"]
scores = st.one_of(st.none(), st.sampled_from([0.5, 1.0, 2.0, -3.0]))
colours = st.one_of(st.none(), st.sampled_from(["red", "blue", "green"]))


@st.composite
def version(draw: Any) -> dict[str, Any]:
    people = draw(st.dictionaries(st.sampled_from(POOL), st.tuples(scores, colours), max_size=10))
    places = draw(st.lists(st.sampled_from(PLACES), unique=True, max_size=4))
    pool = [*people, "ghost"]  # an unknown endpoint: dropped as dangling by the build
    pair = st.tuples(st.sampled_from(pool), st.sampled_from(pool))
    knows = draw(st.lists(pair, max_size=15))
    visits = draw(
        st.lists(
            st.tuples(st.sampled_from(pool), st.sampled_from([*places, "nowhere"])), max_size=10
        )
    )
    return {"people": people, "places": places, "knows": knows, "visits": visits}


def _frame(bundle: Path, kind: str, name: str) -> pd.DataFrame:
    return pq.read_table(bundle / "tables" / kind / f"{name}.parquet").to_pandas()


def _edges_by_id(bundle: Path, dotted: str, source: str, target: str) -> pd.DataFrame:
    edges = _frame(bundle, "edges", dotted)
    s = _frame(bundle, "vertices", source)[["index", "vertex_id"]]
    t = _frame(bundle, "vertices", target)[["index", "vertex_id"]]
    edges = edges.merge(s, left_on="source_index", right_on="index").rename(
        columns={"vertex_id": "s"}
    )
    edges = edges.merge(t, left_on="target_index", right_on="index").rename(
        columns={"vertex_id": "t"}
    )
    return edges[["s", "t"]]


def _multiset_kept(a: pd.DataFrame, b: pd.DataFrame) -> int:
    ca = a.value_counts().rename("a").reset_index()
    cb = b.value_counts().rename("b").reset_index()
    both = ca.merge(cb, on=["s", "t"], how="inner")
    return int(both[["a", "b"]].min(axis=1).sum()) if len(both) else 0


@given(version(), version())
@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
def test_counts_equal_pandas_recounts(old: dict[str, Any], new: dict[str, Any]) -> None:
    with tempfile.TemporaryDirectory() as folder:
        a = build_version(Path(folder) / "a", **old)
        b = build_version(Path(folder) / "b", **new)
        before, _tables.BLOCK = _tables.BLOCK, 3  # blocks of 3 edges: many block boundaries
        try:
            result = compare_bundles(a, b)
        finally:
            _tables.BLOCK = before
        doc = result.to_dict()
        for vt in ("person", "place"):
            va, vb = _frame(a, "vertices", vt), _frame(b, "vertices", vt)
            joined = va.merge(vb, on="vertex_id", how="outer", indicator=True)
            e = doc["vertex_types"][vt]
            assert e["kept"] == int((joined["_merge"] == "both").sum())
            assert e["removed"] == int((joined["_merge"] == "left_only").sum())
            assert e["added"] == int((joined["_merge"] == "right_only").sum())
            # the index map round-trips: old index -> new index -> the same original ID
            m = result.index_maps[vt].to_pandas()
            back = m.merge(va, left_on="old_index", right_on="index").merge(
                vb, left_on="new_index", right_on="index", suffixes=("_a", "_b")
            )
            assert len(back) == e["kept"]
            assert (back["vertex_id_a"] == back["vertex_id_b"]).all()
        kept = _frame(a, "vertices", "person").merge(
            _frame(b, "vertices", "person"), on="vertex_id", suffixes=("_a", "_b")
        )
        for prop in ("score", "colour"):
            x, y = kept[f"{prop}_a"], kept[f"{prop}_b"]
            differs = ~((x == y) | (x.isna() & y.isna()))
            assert doc["vertex_types"]["person"]["values_changed"][prop] == int(differs.sum())
        for dotted, (s, t) in {
            "person.knows.person": ("person", "person"),
            "person.visits.place": ("person", "place"),
        }.items():
            ea, eb = _edges_by_id(a, dotted, s, t), _edges_by_id(b, dotted, s, t)
            e = doc["relations"][dotted]
            kept_edges = _multiset_kept(ea, eb)
            assert (e["old"], e["new"], e["kept"]) == (len(ea), len(eb), kept_edges)
            assert e["added"] == len(eb) - kept_edges and e["removed"] == len(ea) - kept_edges
