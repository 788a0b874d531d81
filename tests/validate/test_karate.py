"""The karate club graph that networkx ships (networkx.karate_club_graph, Zachary 1977):
34 members, 78 friendships (counts checked below against networkx itself), and each
member's club after the split in the node attribute "club" ("Mr. Hi" or "Officer", from
memory of the networkx docs; the tests read the values from networkx)."""

from __future__ import annotations

from collections import Counter
from pathlib import Path

import networkx as nx
import pytest

from graphmill.validate import run_checks
from tests.validate._graphs import publish

KARATE = nx.karate_club_graph()


def _karate(tmp_path: Path, edges: list[tuple[int, int]], **checks):
    clubs = [KARATE.nodes[n]["club"] for n in KARATE.nodes]
    return publish(
        tmp_path,
        vertex_types={"member": {"properties": {"club": {"kind": "string"}}}},
        relations=[
            {
                "from": "member",
                "name": "friend",
                "to": "member",
                "undirected": True,
                "properties": {"weight": {"kind": "integer", "min": 1}},
            }
        ],
        label={"vertex_type": "member", "property": "club"},
        checks=checks,
        vertices={"member": {"vertex_id": [str(n) for n in KARATE.nodes], "club": clubs}},
        edges={
            "member.friend.member": {
                "source_id": [str(u) for u, _ in edges],
                "target_id": [str(v) for _, v in edges],
                "weight": [KARATE.edges[u, v]["weight"] for u, v in edges],
            }
        },
    )


def _by_rule(report):
    return {f.rule: f for f in report.findings}


def test_published_sizes():
    # networkx.karate_club_graph (Zachary 1977): 34 vertices, 78 edges
    assert (KARATE.number_of_nodes(), KARATE.number_of_edges()) == (34, 78)


def test_stored_one_way_every_edge_lacks_its_reverse(tmp_path):
    edges = list(KARATE.edges())
    report = run_checks(*_karate(tmp_path, edges))
    found = _by_rule(report)
    assert found["one-way-edge"].count == 78
    assert found["one-way-edge"].denominator == 78
    assert found["one-way-edge"].details["pairs"] == 78
    assert found["one-way-edge"].severity == "warning"  # symmetrize will add the reverses
    one_way = nx.DiGraph(edges)
    assert found["reciprocity"].details["reciprocity"] == 0.0 == nx.overall_reciprocity(one_way)


def test_stored_both_ways_reciprocity_is_one(tmp_path):
    directed = KARATE.to_directed()
    edges = list(directed.edges())
    assert len(edges) == 156
    report = run_checks(*_karate(tmp_path, edges))
    found = _by_rule(report)
    assert "one-way-edge" not in found
    assert found["reciprocity"].details["reciprocity"] == 1.0
    assert found["reciprocity"].details["reciprocity"] == nx.overall_reciprocity(directed)
    assert (found["reciprocity"].count, found["reciprocity"].denominator) == (156, 156)
    statuses = {(e.rule, e.status) for e in report.evaluated}
    for rule in ("dangling-edge", "self-loop", "repeated-edge", "isolated-vertex"):
        assert (rule, "pass") in statuses, rule
    assert nx.number_of_selfloops(KARATE) == 0 and not list(nx.isolates(KARATE))
    assert report.passed


@pytest.mark.parametrize("min_class_size", [17, 18])
def test_club_classes(tmp_path, min_class_size):
    sizes = Counter(KARATE.nodes[n]["club"] for n in KARATE.nodes)
    report = run_checks(*_karate(tmp_path, list(KARATE.edges()), min_class_size=min_class_size))
    found = _by_rule(report)
    thin = sorted((club, n) for club, n in sizes.items() if n < min_class_size)
    if thin:
        assert found["thin-class"].count == len(thin)
        assert [(r["class"], r["members"]) for r in found["thin-class"].sample] == thin
    else:
        assert "thin-class" not in found
    assert found["unlabeled-vertices"].count == 0
    assert found["unlabeled-vertices"].severity == "info"
