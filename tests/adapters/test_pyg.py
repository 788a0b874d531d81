"""The PyTorch Geometric adapter on the demo bundle: the library's own validation, and one
training step of a small heterogeneous model (2-layer GraphSAGE through ``to_hetero``) that
lowers the loss."""

from __future__ import annotations

import sys
import warnings
from pathlib import Path
from typing import Any

import pytest
import yaml

REPO = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO / "examples" / "lending_coop"))

torch = pytest.importorskip("torch")
with warnings.catch_warnings():  # torch_geometric 2.8 imports torch.jit.script (deprecated)
    warnings.simplefilter("ignore", FutureWarning)
    pyg = pytest.importorskip("torch_geometric")
    from torch_geometric.nn import SAGEConv, to_hetero

import generate  # noqa: E402

import graphmill  # noqa: E402
from graphmill.adapters.pyg import link_prediction_graphs, to_graph, to_hetero_graph  # noqa: E402
from graphmill.errors import InputError  # noqa: E402
from graphmill.spec import spec_from_dict  # noqa: E402

SPEC = REPO / "examples" / "lending_coop" / "spec.yaml"


@pytest.fixture(scope="module")
def bundle(tmp_path_factory: pytest.TempPathFactory) -> Any:
    root = tmp_path_factory.mktemp("coop")
    counts = generate.generate(root / "data")
    document = yaml.safe_load(SPEC.read_text(encoding="utf-8"))
    document["source"]["paths"] = [str(counts.path)]
    document["output"] = {"snapshot": str(root / "snapshot"), "bundle": str(root / "bundle")}
    result = graphmill.Pipeline(spec_from_dict(document, base_dir=root)).run()
    return graphmill.load_bundle(result.build.bundle)


def test_the_hetero_graph_holds_the_bundle_and_validates(bundle: Any) -> None:
    data = to_hetero_graph(bundle)
    assert data.validate(raise_on_error=True)  # the library's own checks
    for name, vt in bundle.vertex_types.items():
        assert data[name].num_nodes == vt.count
        if vt.features is not None:
            assert torch.equal(data[name].x, vt.features)
    members = bundle.vertex_types["member"]
    assert torch.equal(data["member"].y, members.labels)
    for part, mask in (("train", "train_mask"), ("validation", "val_mask"), ("test", "test_mask")):
        assert torch.equal(data["member"][mask].nonzero().flatten(), members.parts[part])
    for key, rel in bundle.relations.items():
        assert torch.equal(
            data[key.source_type, key.name, key.target_type].edge_index, rel.endpoints
        )


def test_one_training_step_of_a_hetero_sage_lowers_the_loss(bundle: Any) -> None:
    torch.manual_seed(0)
    data = to_hetero_graph(bundle)
    for name in data.node_types:  # types without features get a constant input (our choice)
        if "x" not in data[name]:
            data[name].x = torch.ones((data[name].num_nodes, 1))

    class Sage(torch.nn.Module):
        def __init__(self) -> None:
            super().__init__()
            self.first = SAGEConv((-1, -1), 16)
            self.second = SAGEConv((-1, -1), 2)

        def forward(self, x: Any, edge_index: Any) -> Any:
            return self.second(self.first(x, edge_index).relu(), edge_index)

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # torch.fx tracing notes from the library
        model = to_hetero(Sage(), data.metadata(), aggr="sum")
    mask = data["member"].train_mask
    labels = data["member"].y[mask]

    def loss() -> Any:
        out = model(data.x_dict, data.edge_index_dict)["member"]
        return torch.nn.functional.cross_entropy(out[mask], labels)

    with torch.no_grad():
        loss()  # initialise the lazy input sizes
    optimizer = torch.optim.Adam(model.parameters(), lr=0.01)
    before = loss()
    optimizer.zero_grad()
    before.backward()
    optimizer.step()
    with torch.no_grad():
        after = loss()
    assert torch.isfinite(before) and after.item() < before.item()


def test_link_prediction_needs_an_edge_split_and_one_type_graph_needs_one_type(bundle: Any) -> None:
    with pytest.raises(InputError, match="no edge split"):
        link_prediction_graphs(bundle)
    with pytest.raises(InputError, match="one vertex type and one relation"):
        to_graph(bundle)


def test_one_type_and_one_relation_give_a_homogeneous_graph(tmp_path: Path) -> None:
    import networkx as nx
    import pyarrow as pa

    from graphmill.transform import build_bundle
    from tests.transform._snapshots import publish, spec_document

    graph = nx.karate_club_graph()  # Zachary (1977): 34 members, 78 friendships (networkx)
    people = pa.table(
        {
            "vertex_id": [f"p{v:02d}" for v in graph],
            "club": [graph.nodes[v]["club"] for v in graph],
            "weight": [float(graph.degree[v]) for v in graph],
        }
    )
    knows = pa.table(
        {
            "source_id": [f"p{u:02d}" for u, _ in graph.edges],
            "target_id": [f"p{v:02d}" for _, v in graph.edges],
        }
    )
    document = spec_document(
        tmp_path,
        {"person": {"properties": {"club": None, "weight": {"kind": "float"}}}},
        [{"from": "person", "name": "knows", "to": "person", "undirected": True}],
        features={"person": [{"property": "weight", "encoding": "standardize"}]},
        label={"vertex_type": "person", "property": "club"},
    )
    spec, snapshot = publish(document, {"person": people, "person.knows.person": knows})
    build_bundle(spec, snapshot)
    data = to_graph(spec.output.bundle)
    assert data.validate(raise_on_error=True)
    assert (data.num_nodes, data.num_edges) == (34, 156)  # 78 friendships, both directions
    assert data.x.shape == (34, 2) and int(data.train_mask.sum()) > 0


def test_link_prediction_graphs_follow_an_edge_split(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The edge-split tensors come from the edge-split stage; here a fixed split (even edge
    positions train, odd validation, none test) is written into a real build in their
    layout, and the negatives are recounted by brute force against every positive."""
    import networkx as nx
    import numpy as np
    import pyarrow as pa

    import graphmill.transform._build as build_module
    from graphmill.transform import build_bundle
    from graphmill.transform._edge_features import add_edge_features
    from tests.transform._snapshots import publish, spec_document

    graph = nx.les_miserables_graph()  # Knuth (1993), as networkx ships it: 77 characters
    names = sorted(graph)
    key = "relation.person.knows.person"

    def with_split(content: Any, spec: Any) -> None:
        add_edge_features(content, spec)
        content.materialize()  # relations without a task wait in the engine until written
        endpoints = content.tensors[f"{key}.endpoints"]
        e = endpoints.shape[1]
        content.add_tensor(f"{key}.part.train.positions", np.arange(0, e, 2), "train edges")
        content.add_tensor(f"{key}.part.validation.positions", np.arange(1, e, 2), "validation")
        known = set(zip(endpoints[0].tolist(), endpoints[1].tolist(), strict=True))
        absent = [(u, v) for u in range(77) for v in range(77) if u != v and (u, v) not in known]
        negatives = np.array(absent[: e // 2], dtype=np.int64).T
        content.add_tensor(f"{key}.negatives.validation", negatives, "validation negatives")

    monkeypatch.setattr(build_module, "add_edge_features", with_split)
    people = pa.table({"vertex_id": names})
    knows = pa.table(
        {"source_id": [u for u, _ in graph.edges], "target_id": [v for _, v in graph.edges]}
    )
    document = spec_document(
        tmp_path,
        {"person": {}},
        [{"from": "person", "name": "knows", "to": "person", "undirected": True}],
    )
    spec, snapshot = publish(document, {"person": people, "person.knows.person": knows})
    build_bundle(spec, snapshot)
    graphs = link_prediction_graphs(spec.output.bundle)
    endpoints = graphmill.load_bundle(spec.output.bundle).relations
    (rel,) = endpoints.values()
    edge = ("person", "knows", "person")
    for data in graphs.values():
        assert data.validate(raise_on_error=True)
        assert torch.equal(data[edge].edge_index, rel.endpoints[:, 0::2])  # train edges only
    validation = graphs["validation"][edge]
    positives = rel.endpoints[:, 1::2]
    assert torch.equal(validation.edge_label_index[:, : positives.shape[1]], positives)
    assert validation.edge_label.sum().item() == positives.shape[1]
    assert validation.edge_label.numel() == positives.shape[1] + rel.count // 2
    known = set(map(tuple, rel.endpoints.T.tolist()))
    labelled_negative = validation.edge_label_index[:, validation.edge_label == 0]
    assert not any(tuple(p) in known for p in labelled_negative.T.tolist())
    assert "edge_label" not in graphs["test"][edge]  # no test positives in this split
    assert 2 * graph.number_of_edges() == rel.count  # 254 undirected edges, both directions
