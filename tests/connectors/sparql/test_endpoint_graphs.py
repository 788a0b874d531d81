"""``rdf.graphs`` and ``rdf.graph_property`` on real servers: Fuseki's default graph is not
the union of its named graphs, so ``union`` must be spelled out in the queries; every server
must then agree with the N-Quads dump, and with the counts worked out by hand below."""

from __future__ import annotations

from pathlib import Path

import pytest
import sparql_cases as cases
from sparql_helpers import endpoint, pull_spec, snapshot_files

from graphmill.snapshot import Snapshot

pytestmark = pytest.mark.servers
G = cases.GRAPH_NS

# graphs option -> (vertex ids, graph property per vertex, edges); from graph_nquads' doc
EXPECTED = {
    "default": ("ab", {"a": "", "b": ""}, ["ab", "bc"]),
    "union": (
        "abcde",
        {"a": "", "b": "", "c": f"{G}g1", "d": f"{G}g1", "e": f"{G}g2"},
        ["ab", "bc", "cd", "de", "ef"],
    ),
    "g1": ("cd", {"c": f"{G}g1", "d": f"{G}g1"}, ["cd", "de"]),
    "g1+g2": ("cde", {"c": f"{G}g1", "d": f"{G}g1", "e": f"{G}g2"}, ["cd", "de", "ef"]),
}
OPTIONS = {"default": "default", "union": "union", "g1": ["ex:g1"], "g1+g2": ["ex:g1", "ex:g2"]}


def _doc(source: dict, out: Path, graphs: object) -> dict:
    return {
        "spec_version": 1,
        "source": source,
        "rdf": {"prefixes": {"ex": G}, "graphs": graphs, "graph_property": "graph"},
        "vertex_types": {
            "thing": {
                "match": "ex:Thing",
                "properties": {"label": {"from": "ex:label", "multi": True}},
            }
        },
        "relations": [{"from": "thing", "name": "linked", "to": "thing", "match": "ex:linked"}],
        "output": {"bundle": str(out / "bundle"), "snapshot": str(out / "snapshot")},
    }


@pytest.mark.parametrize("choice", list(EXPECTED))
def test_graph_selection(quad_server, case_files, tmp_path, choice):
    graphs = OPTIONS[choice]
    _, info = pull_spec(_doc(endpoint(quad_server.query_url, page_size=2), tmp_path / "s", graphs))
    dump = {"kind": "rdf-file", "paths": [str(case_files["graphs"])]}
    pull_spec(_doc(dump, tmp_path / "d", graphs))
    assert snapshot_files(tmp_path / "s" / "snapshot") == snapshot_files(
        tmp_path / "d" / "snapshot"
    )

    letters, graph_of, edges = EXPECTED[choice]
    snap = Snapshot.open(tmp_path / "s" / "snapshot")
    things = snap.vertices("thing").to_pylist()
    assert [t["vertex_id"] for t in things] == [G + x for x in letters]
    assert {t["vertex_id"][len(G) :]: t["graph"] for t in things} == graph_of
    got = [
        (e["source_id"][len(G) :], e["target_id"][len(G) :])
        for e in snap.edges(snap.relations[0]).to_pylist()
    ]
    assert got == [tuple(e) for e in edges]  # d -> e is in g1 and g2, and counts once
    if choice == "union":
        d = next(t for t in things if t["vertex_id"] == G + "d")
        assert d["label"] == ["d in g1", "d in g2"]
        assert any("graph" in w for w in info.warnings)  # d is typed in two graphs
