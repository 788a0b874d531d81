"""What the card plots, read batch by batch, against values computed another way.

A real bundle of Zachary's karate club (networkx.karate_club_graph: 34 members, 78
friendships) is built through a staged snapshot; the card's degree points are compared with
networkx's own degree histogram and its class balance with the bundle's tensors.
"""

from __future__ import annotations

from collections import Counter
from pathlib import Path

import networkx as nx
import pyarrow as pa
import pytest

from graphmill.bundle import read_manifest
from graphmill.card import card_html
from graphmill.card._data import class_balance, degree_points
from graphmill.transform import build_bundle
from tests.transform._snapshots import publish, spec_document

GRAPH = nx.karate_club_graph()


@pytest.fixture(scope="module")
def karate(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("karate")
    tables = {
        "person": pa.table(
            {
                "vertex_id": [f"p{v:02d}" for v in GRAPH.nodes],
                "club": [GRAPH.nodes[v]["club"] for v in GRAPH.nodes],
            }
        ),
        "person.meets.person": pa.table(
            {
                "source_id": [f"p{u:02d}" for u, _ in GRAPH.edges],
                "target_id": [f"p{v:02d}" for _, v in GRAPH.edges],
            }
        ),
    }
    document = spec_document(
        out,
        {"person": {"properties": {"club": {"kind": "string"}}}},
        [{"from": "person", "name": "meets", "to": "person", "undirected": True}],
        label={"vertex_type": "person", "property": "club"},
        split={"method": "stratified", "seed": 3},
    )
    spec, snapshot = publish(document, tables)
    build_bundle(spec, snapshot)
    return Path(spec.output.bundle)


@pytest.mark.parametrize("batch_rows", [5, 1 << 16])  # many batches, and one
def test_degree_points_match_networkx_degree_histogram(karate: Path, batch_rows: int) -> None:
    manifest = read_manifest(karate)
    (dotted,) = manifest["relations"]
    points = degree_points(karate, manifest, dotted, batch_rows=batch_rows)
    # networkx.degree_histogram: list index = degree, value = number of vertices with it
    histogram = nx.degree_histogram(GRAPH)
    want = {d: n for d, n in enumerate(histogram) if n and d}
    for side in ("out", "in"):  # undirected: each friendship is stored both ways
        degrees, counts = points[side]
        assert dict(zip(degrees.tolist(), counts.tolist(), strict=True)) == want


@pytest.mark.parametrize("batch_rows", [4, 1 << 16])
def test_class_balance_matches_the_tensors(karate: Path, batch_rows: int) -> None:
    from safetensors.numpy import load_file

    manifest = read_manifest(karate)
    balance = class_balance(karate, manifest, batch_rows=batch_rows)
    tensors = load_file(karate / "tensors.safetensors")
    classes = manifest["label"]["classes"]
    labels = tensors["vertex.person.labels"]
    want = {
        part: dict(
            Counter(classes[c] for c in labels[tensors[f"vertex.person.part.{part}.positions"]])
        )
        for part in ("train", "validation", "test")
    }
    assert balance == {p: per for p, per in want.items() if per}
    assert sum(n for per in balance.values() for n in per.values()) == GRAPH.number_of_nodes()


def test_the_card_of_a_bundle_is_the_one_it_holds(karate: Path) -> None:
    manifest = read_manifest(karate)
    body = {k: v for k, v in manifest.items() if k != "manifest_sha256"}
    body["files"] = [f for f in body["files"] if f["path"] != "card.html"]
    assert card_html(karate, body).encode("utf-8") == (karate / "card.html").read_bytes()


def test_a_vertex_table_out_of_row_order_is_named(karate: Path, tmp_path: Path) -> None:
    import shutil

    import pyarrow.parquet as pq

    from graphmill.errors import BundleIntegrityError

    copy = tmp_path / "bundle"
    shutil.copytree(karate, copy)
    manifest = read_manifest(copy)
    path = copy / manifest["vertex_types"]["person"]["table"]
    table = pq.read_table(path)
    pq.write_table(table.take(list(reversed(range(table.num_rows)))), path)
    with pytest.raises(BundleIntegrityError, match="not the row number at row 0") as caught:
        class_balance(copy, manifest)
    assert caught.value.file == str(path)
