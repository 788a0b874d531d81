"""Differential: pull + check + build give byte-identical files on every engine.

Snapshot files, the JSON report and every bundle file are compared byte for byte between
the reference engine and each other engine (local, and spark on a real ``local[2]`` Spark),
on networkx's karate club graph, the demo's lending cooperative, hypothesis-made graphs with
every structural defect, and TinkerPop's Grateful Dead graph (from a real Gremlin Server,
when one can start). Spark runs fewer hypothesis examples.
"""

from __future__ import annotations

import csv
import dataclasses
import json
import sys
import tempfile
from pathlib import Path
from typing import Any

import networkx as nx
import pytest
import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from graphmill._shards import SHARD_EDGES
from graphmill.spec import EngineSpec, spec_from_dict
from tests.engine._differential import run_everywhere
from tests.validate._graphs import InMemorySource, make_spec

REPO = Path(__file__).resolve().parents[2]


@pytest.mark.parametrize("shard_edges", [None, 10])
def test_karate_club_is_identical_on_every_engine(
    tmp_path: Path, engine_settings: EngineSpec, shard_edges: int | None
) -> None:
    graph = nx.karate_club_graph()  # Zachary (1977): 34 members, 78 friendships (networkx)
    dump = tmp_path / "dump"
    dump.mkdir()
    with open(dump / "people.csv", "w", newline="", encoding="utf-8") as fh:
        out = csv.writer(fh)
        out.writerow(["id", "club", "seat"])
        out.writerows([f"p{v:02d}", graph.nodes[v]["club"], v] for v in graph.nodes)
    with open(dump / "meets.csv", "w", newline="", encoding="utf-8") as fh:
        out = csv.writer(fh)
        out.writerow(["a", "b"])
        out.writerows([f"p{u:02d}", f"p{v:02d}"] for u, v in graph.edges)
    document = {
        "spec_version": 1,
        "name": "karate",
        "source": {
            "kind": "table-files",
            "vertex_files": [{"path": "dump/people.csv", "id_column": "id", "type": "person"}],
            "edge_files": [
                {
                    "path": "dump/meets.csv",
                    "source_column": "a",
                    "target_column": "b",
                    "relation": "meets",
                }
            ],
        },
        "vertex_types": {
            "person": {"properties": {"club": {"kind": "string"}, "seat": {"kind": "integer"}}}
        },
        "relations": [{"from": "person", "name": "meets", "to": "person", "undirected": True}],
        "features": {"person": [{"property": "seat", "encoding": "standardize"}]},
        "label": {"vertex_type": "person", "property": "club"},
        "split": {"method": "stratified", "seed": 3},
        "output": {"bundle": "out/bundle"},
    }
    if shard_edges is not None:  # 78 friendships, both ways: 156 edges in 16 pieces
        document["output"]["shard_edges"] = shard_edges
    spec = spec_from_dict(document, base_dir=tmp_path)
    runs = run_everywhere(spec, tmp_path, engines=("reference", engine_settings))
    assert "error" not in runs[engine_settings.kind]
    files = runs[engine_settings.kind]
    if shard_edges is None:
        assert "bundle/tensors.safetensors" in files
    else:
        pieces = [f for f in files if f.startswith("bundle/tensors/relation.person.meets.")]
        assert len(pieces) == 16 and "bundle/tensors.safetensors" not in files


@pytest.mark.slow
def test_demo_is_identical_on_every_engine(tmp_path: Path, engine_settings: EngineSpec) -> None:
    sys.path.insert(0, str(REPO / "examples" / "lending_coop"))
    import generate

    counts = generate.generate(tmp_path / "data")
    document = yaml.safe_load((REPO / "examples/lending_coop/spec.yaml").read_text("utf-8"))
    document["source"]["paths"] = [str(counts.path)]
    # 5,000 edges per piece: the demo's bundle is sharded and streamed from each engine
    document["output"] = {"bundle": str(tmp_path / "bundle"), "shard_edges": 5000}
    spec = spec_from_dict(document, base_dir=tmp_path)
    runs = run_everywhere(spec, tmp_path, engines=("reference", engine_settings))
    assert any(f.startswith("bundle/tensors/") for f in runs[engine_settings.kind])
    report = runs[engine_settings.kind]["report.json"].decode()
    # the demo plants these defects (examples/lending_coop/generate.py)
    for rule in ("dangling-edge", "one-way-edge", "repeated-edge", "self-loop"):
        assert f'"{rule}"' in report


# ----------------------------------------------------------------- hypothesis graphs

IDS = ["a", "b", "Z", "z", "é", "ä", "ﬃ", "😀", "a b", "a\x1fb", "10", "9"]
UNKNOWN = ["ghost", "Ö"]  # endpoints that are no vertex: dangling edges
FLOATS = st.one_of(
    st.none(),
    st.sampled_from([0.0, -0.0, 1.5, float("nan"), float("inf"), -2.25]),
)


@st.composite
def graphs(draw: Any) -> dict[str, Any]:
    """Two vertex types sharing some IDs, with repeated IDs, dangling, repeated, parallel,
    self-loop and one-way edges, isolated vertices, nulls, NaN and signed zeros."""
    ids = st.sampled_from(IDS)
    ends = st.sampled_from(IDS + UNKNOWN)
    n = draw(st.integers(1, 14))
    accounts = {
        "vertex_id": draw(st.lists(ids, min_size=n, max_size=n)),
        "age": draw(st.lists(st.one_of(st.none(), st.integers(-3, 3)), min_size=n, max_size=n)),
        "score": draw(st.lists(FLOATS, min_size=n, max_size=n)),
        "tier": draw(st.lists(st.sampled_from(["x", "y", None]), min_size=n, max_size=n)),
    }
    shops = {"vertex_id": draw(st.lists(ids, min_size=1, max_size=6))}
    m = draw(st.integers(0, 30))
    pairs = draw(st.lists(st.tuples(ends, ends), min_size=m, max_size=m))
    knows = {
        "source_id": [p[0] for p in pairs],
        "target_id": [p[1] for p in pairs],
        "weight": draw(st.lists(FLOATS, min_size=m, max_size=m)),
        "tags": draw(
            st.lists(
                st.one_of(st.none(), st.lists(st.sampled_from(["p", "q", None]), max_size=2)),
                min_size=m,
                max_size=m,
            )
        ),
    }
    k = draw(st.integers(0, 12))
    buys = {
        "source_id": draw(st.lists(ends, min_size=k, max_size=k)),
        "target_id": draw(st.lists(ends, min_size=k, max_size=k)),
    }
    policy = {
        "duplicates": draw(st.sampled_from(["keep", "drop", "merge"])),
        "self_loops": draw(st.sampled_from(["keep", "drop"])),
        "undirected": draw(st.sampled_from(["symmetrize", "as-is"])),
        "add_reverse": draw(st.booleans()),
    }
    split = draw(st.integers(1, 3))  # pages per table: the merge must not depend on paging
    shards = draw(st.sampled_from([SHARD_EDGES, 1, 3]))  # small: the bundle is sharded
    return {"accounts": accounts, "shops": shops, "knows": knows, "buys": buys,
            "policy": policy, "pages": split, "shard_edges": shards}  # fmt: skip


def _paged(columns: dict[str, list[Any]], pages: int) -> list[dict[str, list[Any]]]:
    rows = len(next(iter(columns.values())))
    cut = [rows * i // pages for i in range(pages + 1)]
    return [{k: v[cut[i] : cut[i + 1]] for k, v in columns.items()} for i in range(pages)]


EXAMPLES = {"local": 30, "spark": 3}


def test_generated_graphs_are_identical_on_every_engine(engine_settings: EngineSpec) -> None:
    @settings(
        max_examples=EXAMPLES[engine_settings.kind],
        deadline=None,
        database=None,
        suppress_health_check=[HealthCheck.too_slow],
    )
    @given(graphs())
    def check(graph: dict[str, Any]) -> None:
        run_generated(graph, ("reference", engine_settings))

    check()


def run_generated(graph: dict[str, Any], engines: tuple[str | EngineSpec, ...]) -> None:
    """Pull, check and build ``graph`` on ``engines``; byte-identical outputs."""
    kind = engines[-1] if isinstance(engines[-1], str) else engines[-1].kind
    with tempfile.TemporaryDirectory() as folder:
        root = Path(folder)
        spec = make_spec(
            root,
            vertex_types={
                "account": {
                    "properties": {
                        "age": {"kind": "integer"},
                        "score": {"kind": "float"},
                        "tier": {"kind": "string"},
                    }
                },
                "shop": {},
            },
            relations=[
                {
                    "from": "account",
                    "name": "knows",
                    "to": "account",
                    "undirected": True,
                    "properties": {
                        "weight": {"kind": "float"},
                        "tags": {"kind": "string", "multi": True},
                    },
                },
                {"from": "account", "name": "buys", "to": "shop"},
            ],
            features={"account": [{"property": "age", "encoding": "standardize"}]},
            label={"vertex_type": "account", "property": "tier"},
            checks={"min_class_size": 1},
            edges=graph["policy"],
        )
        output = dataclasses.replace(spec.output, shard_edges=graph["shard_edges"])
        spec = dataclasses.replace(spec, output=output)
        pages = graph["pages"]

        def source(s: Any) -> InMemorySource:
            return InMemorySource(
                s,
                {
                    "account": _paged(graph["accounts"], pages),
                    "shop": _paged(graph["shops"], 1),
                },
                {
                    "account.knows.account": _paged(graph["knows"], pages),
                    "account.buys.shop": _paged(graph["buys"], pages),
                },
            )

        runs = run_everywhere(spec, root, source, engines)
        assert "error" not in runs[kind], runs[kind]["error"]
        assert "bundle/manifest.json" in runs[kind]


# ----------------------------------------------------------------- Grateful Dead


@pytest.mark.servers
def test_grateful_dead_is_identical_on_every_engine(
    gremlin_server: Any, tmp_path: Path, engine_settings: EngineSpec
) -> None:
    sys.path.insert(0, str(REPO / "tests" / "connectors" / "gremlin"))
    from gremlin_helpers import DEAD_RELATIONS, DEAD_TYPES, gremlin_spec

    spec = gremlin_spec(
        tmp_path, gremlin_server.url, DEAD_TYPES, DEAD_RELATIONS, traversal_source="g_dead"
    )
    runs = run_everywhere(spec, tmp_path, engines=("reference", engine_settings))
    tables = json.loads(runs[engine_settings.kind]["snapshot/snapshot.json"])["tables"]
    edges = sum(t["rows"] for t in tables if t["kind"] == "edges")
    vertices = sum(t["rows"] for t in tables if t["kind"] == "vertices")
    assert (vertices, edges) == (808, 8049)  # TinkerPop documentation, Grateful Dead data set
