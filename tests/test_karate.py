"""Outside check: Zachary's karate club through the whole pipeline, compared with networkx.

The graph is ``networkx.karate_club_graph()`` (W. W. Zachary, "An information flow model for
conflict and fission in small groups", Journal of Anthropological Research 33(4), 1977):
34 members, 78 friendships, and for each member the club it joined after the split
(``G.nodes[v]["club"]``: "Mr. Hi" or "Officer"). It is written as a table dump (CSV), each
undirected edge stored once; only the two leaders, vertex 0 (Mr. Hi) and vertex 33 (the
officer), carry a label. Every expected value below is computed from networkx, not typed in.
"""

from __future__ import annotations

import csv
import sys
from pathlib import Path
from typing import Any

import networkx as nx
import pytest

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO / "examples"))

torch = pytest.importorskip("torch")

import gcn  # noqa: E402

import graphmill  # noqa: E402
from graphmill.spec import RelationKey, spec_from_dict  # noqa: E402

LEADERS = (0, 33)  # Mr. Hi and the officer (networkx.karate_club_graph, Zachary 1977)
RELATION = RelationKey("person", "meets", "person")
SEEDS = range(5)
# Threshold for the GCN trained on two labels. Zachary (1977) reports that his own
# maximum-flow model assigned every member but one to the faction it joined (from memory:
# member 9 in his numbering), and label propagation from the two leaders is commonly shown
# to recover most of the split (from memory). We measured 0.97 (33 of 34) for every seed with
# this GCN; 0.85 leaves room for four more mistakes and is still far above the 0.5 of a coin
# and the 0.5 of naming the larger club for everyone (17 of 34 went each way).
MIN_MEAN_ACCURACY = 0.85


def vertex_id(v: int) -> str:
    return f"p{v:02d}"


def node_of_index(bundle: Any) -> list[int]:
    """The networkx node of each bundle index (decoded from the shipped IDs)."""
    return [int(i[1:]) for i in bundle.decode("person", list(range(34)))]


def write_dump(folder: Path, graph: nx.Graph, edges: list[tuple[int, int]]) -> dict[str, Any]:
    """CSV files for ``graph``'s vertices and the given edges; return the spec's source."""
    folder.mkdir(parents=True, exist_ok=True)
    with open(folder / "people.csv", "w", newline="", encoding="utf-8") as fh:
        out = csv.writer(fh)
        out.writerow(["id", "seat", "faction"])
        for v in graph.nodes:
            out.writerow(
                [vertex_id(v), f"seat{v:02d}", graph.nodes[v]["club"] if v in LEADERS else ""]
            )
    with open(folder / "meetings.csv", "w", newline="", encoding="utf-8") as fh:
        out = csv.writer(fh)
        out.writerow(["a", "b"])
        out.writerows((vertex_id(u), vertex_id(v)) for u, v in edges)
    return {
        "kind": "table-files",
        "vertex_files": [{"path": str(folder / "people.csv"), "id_column": "id", "type": "person"}],
        "edge_files": [
            {"path": str(folder / "meetings.csv"), "source_column": "a", "target_column": "b",
             "relation": "meets"}
        ],
    }  # fmt: skip


def karate_spec(source: dict[str, Any], out: Path) -> dict[str, Any]:
    return {
        "spec_version": 1,
        "name": "karate",
        "source": source,
        "vertex_types": {"person": {"properties": {"seat": {"kind": "string"}, "faction": None}}},
        "relations": [{"from": "person", "name": "meets", "to": "person", "undirected": True}],
        # One-hot of a property unique to each vertex: the feature matrix is the identity,
        # as in Kipf & Welling's featureless setting.
        "features": {"person": [{"property": "seat", "encoding": "one-hot", "missing": "fill"}]},
        "label": {"vertex_type": "person", "property": "faction"},
        # Semi-supervised and transductive, as in Kipf & Welling: every vertex is in the
        # train part (so the one-hot vocabulary, fitted on the train part, holds all 34
        # seats), and only the two leaders there carry a label.
        "split": {"method": "random", "fractions": {"train": 1.0}, "only_labeled": False},
        "edges": {"undirected": "symmetrize"},
        "checks": {"min_class_size": 1, "max_unlabeled_rate": 1.0},
        "output": {"bundle": str(out / "bundle"), "snapshot": str(out / "snapshot")},
    }


def run_pipeline(root: Path, graph: nx.Graph, edges: list[tuple[int, int]]) -> Any:
    spec = spec_from_dict(karate_spec(write_dump(root / "dump", graph, edges), root), base_dir=root)
    return spec, graphmill.Pipeline(spec).run()


def reciprocity_finding(report: Any) -> Any:
    return next(f for f in report.findings if f.rule == "reciprocity")


@pytest.fixture(scope="module")
def graph() -> nx.Graph:
    return nx.karate_club_graph()


@pytest.fixture(scope="module")
def built(graph: nx.Graph, tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    root = tmp_path_factory.mktemp("karate")
    spec, result = run_pipeline(root, graph, list(graph.edges))
    return {"spec": spec, "result": result, "bundle": graphmill.load_bundle(spec.output.bundle)}


def test_counts(graph: nx.Graph, built: dict[str, Any]) -> None:
    pulled = built["result"].pull
    assert graph.number_of_nodes() == 34 and graph.number_of_edges() == 78  # Zachary 1977
    assert pulled.vertex_counts == {"person": graph.number_of_nodes()}
    assert pulled.edge_counts == {RELATION.dotted: graph.number_of_edges()}
    endpoints = built["bundle"].relations[RELATION].endpoints
    assert tuple(endpoints.shape) == (2, 2 * graph.number_of_edges())  # 156 after symmetrizing
    assert built["result"].build.added_edges == {RELATION.dotted: graph.number_of_edges()}


def test_degrees_after_symmetrizing(graph: nx.Graph, built: dict[str, Any]) -> None:
    bundle = built["bundle"]
    endpoints = bundle.relations[RELATION].endpoints
    nodes = node_of_index(bundle)
    out_degree = torch.bincount(endpoints[0], minlength=graph.number_of_nodes()).tolist()
    degree = {nodes[i]: d for i, d in enumerate(out_degree)}
    assert (degree[0], degree[33]) == (graph.degree[0], graph.degree[33])
    assert (graph.degree[0], graph.degree[33]) == (16, 17)  # Zachary 1977, the two leaders
    assert degree == dict(graph.degree)
    assert torch.bincount(endpoints[1], minlength=34).tolist() == out_degree


def test_the_features_are_the_identity(built: dict[str, Any]) -> None:
    person = built["bundle"].vertex_types["person"]
    nodes = node_of_index(built["bundle"])
    # One column per seat, in the row order of the vertices, then the empty unknown bucket.
    assert person.feature_names == (*(f"seat=seat{v:02d}" for v in nodes), "seat=<unknown>")
    assert torch.equal(person.features[:, :34].double(), torch.eye(34, dtype=torch.float64))
    assert not person.features[:, 34].any()


def test_reciprocity_stored_and_symmetrized(
    graph: nx.Graph, built: dict[str, Any], tmp_path: Path
) -> None:
    stored = nx.DiGraph(list(graph.edges))  # each friendship one way, as in the dump
    report = built["result"].report
    assert reciprocity_finding(report).details["reciprocity"] == nx.overall_reciprocity(stored)
    one_way = next(f for f in report.findings if f.rule == "one-way-edge")
    assert one_way.count == graph.number_of_edges()
    # Dump the bundle's symmetrized edges and check them again: now every edge is mutual.
    nodes = node_of_index(built["bundle"])
    endpoints = built["bundle"].relations[RELATION].endpoints.tolist()
    symmetric = [(nodes[s], nodes[t]) for s, t in zip(*endpoints, strict=True)]
    _, again = run_pipeline(tmp_path, graph, symmetric)
    expected = nx.overall_reciprocity(nx.DiGraph(symmetric))
    assert expected == nx.overall_reciprocity(graph.to_directed()) == 1.0
    assert reciprocity_finding(again.report).details["reciprocity"] == expected
    assert not [f for f in again.report.findings if f.rule == "one-way-edge"]


def test_gcn_recovers_the_split(graph: nx.Graph, built: dict[str, Any]) -> None:
    bundle = built["bundle"]
    person = bundle.vertex_types["person"]
    view = gcn.homogeneous_view(bundle, "person")
    assert bool(view.masks["train"].all())
    nodes = node_of_index(bundle)
    labeled = torch.nonzero(view.labels >= 0).flatten().tolist()
    assert sorted(nodes[i] for i in labeled) == list(LEADERS)
    names = list(person.class_names)
    truth = torch.tensor([names.index(graph.nodes[v]["club"]) for v in nodes])
    scores = []
    for seed in SEEDS:
        predicted = gcn.fit_logits(view, epochs=200, seed=seed).argmax(dim=1)
        scores.append((predicted == truth).double().mean().item())
    assert sum(scores) / len(scores) >= MIN_MEAN_ACCURACY, scores
