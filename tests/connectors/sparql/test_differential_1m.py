"""One generated dataset of more than a million triples, three ways: Oxigraph server,
Fuseki (in-memory dataset, loaded over the Graph Store Protocol) and the N-Triples dump
(``rdf-file``); each server read with the paging ``auto`` picks and with key-range slices.
The snapshots -- and the bundles built from them -- must be byte-identical.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from sparql_dataset import dataset_spec, write_ntriples
from sparql_helpers import endpoint, snapshot_files

from graphmill.pipeline import Pipeline
from graphmill.spec import spec_from_dict
from servers.manage import N_TRIPLES, FusekiServer, OxigraphServer
from servers.pytest_fixtures import started

pytestmark = [pytest.mark.slow, pytest.mark.servers]
TRIPLES = 1_000_000


@pytest.fixture(scope="module")
def million(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, int]:
    path = tmp_path_factory.mktemp("million") / "generated.nt"
    return path, write_ntriples(path, triples=TRIPLES)


def _bundle_files(root: Path) -> dict[str, bytes]:
    """Every bundle file but the manifest and the dataset card, plus the manifest's file list
    without the card (the provenance, shown on the card too, names the source, which differs
    by design)."""
    files = {
        str(p.relative_to(root)): p.read_bytes()
        for p in sorted(root.rglob("*"))
        if p.is_file() and p.name not in ("manifest.json", "card.html")
    }
    manifest = json.loads((root / "manifest.json").read_text())
    listed = [f for f in manifest.get("files", []) if f["path"] != "card.html"]
    files["manifest.json:files"] = json.dumps(listed, sort_keys=True).encode()
    return files


def _pull_and_build(source: dict, out: Path) -> tuple[dict[str, bytes], dict[str, bytes], dict]:
    pipeline = Pipeline(spec_from_dict(dataset_spec(source, out)))
    info = pipeline.pull()
    pipeline.build(even_if_failing=True)
    return (snapshot_files(out / "snapshot"), _bundle_files(out / "bundle"), info.to_dict())


def test_a_million_triples_three_ways(million, tmp_path):
    path, written = million
    assert written >= TRIPLES
    results = {"dump": _pull_and_build({"kind": "rdf-file", "paths": [str(path)]}, tmp_path / "d")}
    sliced = {}  # key-range paging with pages smaller than the biggest units
    with started(OxigraphServer(preload=[path])) as oxigraph:
        results["oxigraph"] = _pull_and_build(endpoint(oxigraph.query_url), tmp_path / "o")
        source = endpoint(oxigraph.query_url, paging="key-range", page_size=50_000)
        sliced["oxigraph"] = _pull_and_build(source, tmp_path / "ok")
    with started(FusekiServer(java_options=("-Xmx3g",))) as fuseki:
        fuseki.load(path.read_bytes(), content_type=N_TRIPLES)
        results["fuseki"] = _pull_and_build(endpoint(fuseki.query_url), tmp_path / "f")
        source = endpoint(fuseki.query_url, paging="key-range", page_size=50_000)
        sliced["fuseki"] = _pull_and_build(source, tmp_path / "fk")
    dump_snapshot, dump_bundle, dump_info = results["dump"]
    # counts from the generator (sparql_dataset): people = TRIPLES // 15, two knows each
    people = TRIPLES // 15
    assert dump_info["vertex_counts"]["person"] == people
    assert dump_info["edge_counts"]["person.knows.person"] == 2 * people
    for name in ("oxigraph", "fuseki"):
        snapshot, bundle, info = results[name]
        assert info["vertex_counts"] == dump_info["vertex_counts"], name
        assert info["edge_counts"] == dump_info["edge_counts"], name
        assert snapshot == dump_snapshot, name
        assert bundle == dump_bundle, name
        assert sliced[name][0] == dump_snapshot and sliced[name][1] == dump_bundle, name
        assert sliced[name][2]["pages_read"] > info["pages_read"], name
