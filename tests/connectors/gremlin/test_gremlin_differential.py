"""Differential: one generated graph of 200 000+ edges, written into a real Gremlin Server
through bytecode and into Parquet files; the bundle built from the server must equal, byte
for byte, the bundle built from the files (all but the manifest's source description)."""

from __future__ import annotations

import json

import pyarrow.parquet as pq
import pytest
from gremlin_dataset import EDGE_LABELS, LABELS, generate, gremlin_maps, shared_spec_parts
from gremlin_helpers import digests, drop_labels, write_graph

from graphmill.bundle import MANIFEST_FILE
from graphmill.pipeline import Pipeline
from graphmill.spec import spec_from_dict

pytestmark = [pytest.mark.servers, pytest.mark.slow]
EDGES = 205_000


@pytest.fixture(scope="module")
def graph():
    return generate(members=20_000, shops=2_000, items=10_000, edges=EDGES)


@pytest.fixture(scope="module")
def served(gremlin_server, graph):
    drop_labels(gremlin_server.url, list(LABELS.values()))
    vertices, edges = gremlin_maps(graph)
    write_graph(gremlin_server.url, vertices, edges, chunk=5000)
    yield gremlin_server
    drop_labels(gremlin_server.url, list(LABELS.values()))


def _spec(folder, source):
    vertex_types, relations = shared_spec_parts()
    document = {
        "spec_version": 1,
        "name": "generated",
        "source": source,
        "vertex_types": vertex_types,
        "relations": relations,
        "output": {"bundle": str(folder / "bundle")},
    }
    return spec_from_dict(document, base_dir=folder)


def _dump(graph, folder):
    folder.mkdir(parents=True, exist_ok=True)
    vertex_files, edge_files = [], []
    for name, table in graph["vertices"].items():
        pq.write_table(table, folder / f"{name}.parquet")
        vertex_files.append({"path": f"{name}.parquet", "id_column": "id", "type": name})
    for name, table in graph["edges"].items():
        pq.write_table(table.drop_columns(["eid"]), folder / f"{name}.parquet")
        edge_files.append(
            {
                "path": f"{name}.parquet",
                "source_column": "src",
                "target_column": "dst",
                "relation": name,
            }
        )
    return {"kind": "table-files", "vertex_files": vertex_files, "edge_files": edge_files}


# What names the source, and so differs by design: the manifest's provenance, its lineage (the
# spec's hash covers the source section) and the dataset card (which shows the provenance).
BY_SOURCE = ("source", "lineage", "manifest_sha256")
CARD = "card.html"


def _manifest_without_source(bundle):
    document = json.loads((bundle / MANIFEST_FILE).read_text())
    document["files"] = [f for f in document.get("files", []) if f["path"] != CARD]
    return {k: v for k, v in document.items() if k not in BY_SOURCE}


def test_server_and_dump_give_the_same_bundle(served, graph, tmp_path):
    assert sum(t.num_rows for t in graph["edges"].values()) >= 200_000
    from_server = _spec(
        tmp_path / "server",
        {
            "kind": "gremlin",
            "url": served.url,
            "partitions": 2,
            "page_size": 20_000,
            "batch_size": 2000,
        },
    )
    from_dump = _spec(tmp_path / "dump", _dump(graph, tmp_path / "dump"))
    ran = [Pipeline(spec).run() for spec in (from_server, from_dump)]
    for result in ran:
        assert result.build is not None, result.report.summary()
    assert ran[0].pull.edge_counts == {
        "member.follows.member": graph["edges"]["follows"].num_rows,
        "member.buys.item": graph["edges"]["buys"].num_rows,
        "shop.sells.item": graph["edges"]["sells"].num_rows,
    }
    assert ran[0].pull.edge_counts == ran[1].pull.edge_counts
    server_tables = {t["name"]: t["sha256"] for t in _tables(from_server)}
    dump_tables = {t["name"]: t["sha256"] for t in _tables(from_dump)}
    assert server_tables == dump_tables
    server_files = digests(from_server.output.bundle)
    dump_files = digests(from_dump.output.bundle)
    for files in (server_files, dump_files):
        files.pop(MANIFEST_FILE), files.pop(CARD)
    assert server_files == dump_files
    assert _manifest_without_source(from_server.output.bundle) == _manifest_without_source(
        from_dump.output.bundle
    )
    assert set(EDGE_LABELS.values()) <= {
        e["label"] for e in _snapshot(from_server)["discovery"]["edge_labels"]
    }


def _snapshot(spec):
    return json.loads((spec.output.snapshot / "snapshot.json").read_text())


def _tables(spec):
    return _snapshot(spec)["tables"]
