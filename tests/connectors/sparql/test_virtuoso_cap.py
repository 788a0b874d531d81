"""Virtuoso's own result cap, met for real: Debian's Virtuoso 7 with ``ResultSetMaxRows`` at
its default of 10,000 rows cuts every longer answer without an error. On a generated graph
(``sparql_dataset``) whose person units hold 11,000 to 22,000 rows each, ``paging: auto``
must pick key-range and lose nothing; single-stream and offset paging, which cannot get past
the cap, must stop with exit 7 and publish nothing; and the snapshot from Virtuoso must be
byte-identical to Oxigraph's, Fuseki's and the dump's. A second Virtuoso with a cap of 250
rows (not a round number, so only its ``X-SPARQL-MaxRows`` header gives it away) checks that
a capped membership sample is refined rather than trusted; a third holds the same triples in
two graphs, which a query without FROM sees both of, and must read them once.
"""

from __future__ import annotations

from pathlib import Path

import pytest
import sparql_cases as cases
from sparql_dataset import TRIPLES_PER_PERSON, dataset_spec, write_ntriples
from sparql_helpers import endpoint, pull_spec, small_spec_doc, snapshot_files

from graphmill.connectors import open_source
from graphmill.connectors.sparql._source import SparqlEndpointSource
from graphmill.errors import MalformedResponseError
from graphmill.spec import spec_from_dict
from servers.manage import N_TRIPLES, FusekiServer, OxigraphServer, VirtuosoServer
from servers.pytest_fixtures import started

pytestmark = [pytest.mark.servers, pytest.mark.slow]
CAP = 10_000  # ResultSetMaxRows in Debian's virtuoso.ini, Virtuoso's default
TRIPLES = 165_000
PEOPLE = TRIPLES // TRIPLES_PER_PERSON  # the generator's rule (sparql_dataset.write_ntriples)
FAST_FAIL = {"attempts": 2, "initial_wait_s": 0.01, "max_wait_s": 0.05}


@pytest.fixture(scope="module")
def graph(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("capped") / "generated.nt"
    write_ntriples(path, triples=TRIPLES)
    return path


@pytest.fixture(scope="module")
def dump(graph: Path, tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("capped-dump")
    _, info = pull_spec(dataset_spec({"kind": "rdf-file", "paths": [str(graph)]}, out))
    assert info.vertex_counts["person"] == PEOPLE > CAP
    assert info.edge_counts["person.knows.person"] == 2 * PEOPLE  # two `knows` per person
    return out / "snapshot"


@pytest.fixture(scope="module")
def virtuoso(graph: Path):
    with started(VirtuosoServer(preload=[graph])) as server:
        assert server.result_cap == CAP
        yield server


def test_auto_picks_key_range_for_virtuoso(virtuoso, tmp_path):
    spec = spec_from_dict(dataset_spec(endpoint(virtuoso.query_url), tmp_path))
    with open_source(spec) as source:
        assert isinstance(source, SparqlEndpointSource)
        assert source.server.product == "virtuoso"  # from the Server header of `ASK {}`
        assert source.paging == "key-range"
        assert source.settings is not None and source.settings.results_format == "json"


def test_the_cap_is_real(virtuoso):
    """The server really cuts an answer at 10,000 rows (and says so in a header only)."""
    import httpx

    query = "SELECT ?s WHERE { ?s ?p ?o }"
    response = httpx.post(
        virtuoso.query_url,
        data={"query": query},
        headers={"Accept": "application/sparql-results+json"},
        timeout=120.0,
    )
    assert response.status_code == 200
    assert len(response.json()["results"]["bindings"]) == CAP < TRIPLES
    assert response.headers["X-SPARQL-MaxRows"] == str(CAP)


@pytest.mark.parametrize("paging", ["auto", "single-stream", "offset"])
def test_every_strategy_is_complete_or_exit_7(virtuoso, dump, tmp_path, paging):
    source = endpoint(virtuoso.query_url, paging=paging, retries=FAST_FAIL)
    if paging == "auto":
        _, info = pull_spec(dataset_spec(source, tmp_path))
        assert info.vertex_counts["person"] == PEOPLE
        assert info.edge_counts["person.knows.person"] == 2 * PEOPLE
        assert snapshot_files(tmp_path / "snapshot") == snapshot_files(dump)
        return
    words = "holds more" if paging == "single-stream" else "caps sorted results"
    with pytest.raises(MalformedResponseError, match=words) as failure:
        pull_spec(dataset_spec(source, tmp_path))
    assert failure.value.exit_code == 7
    assert "key-range" in failure.value.one_line()
    assert not (tmp_path / "snapshot").exists()


def test_three_servers_and_the_dump_agree_byte_for_byte(virtuoso, graph, dump, tmp_path):
    snapshots = {}
    source = endpoint(virtuoso.query_url, paging="key-range", page_size=4000)
    pull_spec(dataset_spec(source, tmp_path / "virtuoso"))
    snapshots["virtuoso"] = snapshot_files(tmp_path / "virtuoso" / "snapshot")
    with started(OxigraphServer(preload=[graph])) as oxigraph:
        pull_spec(dataset_spec(endpoint(oxigraph.query_url), tmp_path / "oxigraph"))
    snapshots["oxigraph"] = snapshot_files(tmp_path / "oxigraph" / "snapshot")
    with started(FusekiServer()) as fuseki:
        fuseki.load(graph.read_bytes(), content_type=N_TRIPLES)
        pull_spec(dataset_spec(endpoint(fuseki.query_url), tmp_path / "fuseki"))
    snapshots["fuseki"] = snapshot_files(tmp_path / "fuseki" / "snapshot")
    expected = snapshot_files(dump)
    assert len(expected) == 7  # 3 vertex types + 4 relations
    for name, files in snapshots.items():
        assert files == expected, name


def test_a_sample_cut_by_the_cap_is_refined(case_files, case_oxigraph, tmp_path, monkeypatch):
    """Cap 250: the membership answer (740 things) is cut, so the key sample covers part of
    the keys; slices beyond it are cut too and must be sampled again, not given up on."""
    reference = tmp_path / "reference"
    doc = small_spec_doc(endpoint(case_oxigraph.query_url), reference, namespace=cases.PAGING_NS)
    pull_spec(doc)
    with started(VirtuosoServer(preload=[case_files["paging"]], result_cap=250)) as server:
        doc = small_spec_doc(endpoint(server.query_url), tmp_path / "v", namespace=cases.PAGING_NS)
        _, info = pull_spec(doc)
        assert info.vertex_counts["thing"] == 740  # paging_ntriples(): 700 IRIs + 40 blank
        ours, theirs = _iri_rows(tmp_path / "v" / "snapshot"), _iri_rows(reference / "snapshot")
        assert ours == theirs
        # without the second sampling the same pull cannot get past the cut slices
        monkeypatch.setattr(SparqlEndpointSource, "_resampled", lambda *args: None)
        doc = small_spec_doc(endpoint(server.query_url), tmp_path / "x", namespace=cases.PAGING_NS)
        with pytest.raises(MalformedResponseError, match="no smaller slice") as failure:
            pull_spec(doc)
    assert failure.value.exit_code == 7


def _iri_rows(root: Path) -> dict[str, list[dict]]:
    """Vertices and edges without blank nodes (Virtuoso names them its own way)."""
    from graphmill.snapshot import Snapshot

    snap = Snapshot.open(root)
    things = [r for r in snap.vertices("thing").to_pylist() if not r["vertex_id"].startswith("_:")]
    edges = [
        e
        for e in snap.edges(snap.relations[0]).to_pylist()
        if not (e["source_id"].startswith("_:") or e["target_id"].startswith("_:"))
    ]
    return {"things": things, "edges": edges}


def test_explicit_tsv_is_refused_on_virtuoso(virtuoso, tmp_path):
    """Virtuoso's TSV has no '?' in its header and writes IRIs as quoted strings, like
    literals (measured): asked for explicitly, it is a spec error naming the key."""
    from graphmill.errors import SpecError

    source = endpoint(virtuoso.query_url, results_format="tsv")
    with pytest.raises(SpecError, match=r"not SPARQL 1\.1 TSV") as failure:
        pull_spec(dataset_spec(source, tmp_path))
    assert failure.value.exit_code == 2
    assert "source.results_format" in failure.value.one_line()
    assert not (tmp_path / "snapshot").exists()


@pytest.fixture(scope="module")
def held_twice(tmp_path_factory: pytest.TempPathFactory):
    """Virtuoso holding the same triples (no blank nodes) in two graphs, and their dump."""
    root = tmp_path_factory.mktemp("held-twice")
    data = root / "things.nt"
    data.write_text(cases.paging_ntriples(blanks=0), encoding="utf-8")
    source = {"kind": "rdf-file", "paths": [str(data)]}
    pull_spec(small_spec_doc(source, root / "dump", namespace=cases.PAGING_NS))
    with started(VirtuosoServer(preload=[data])) as server:
        server.load(data.read_bytes(), content_type=N_TRIPLES, graph="urn:graphmill:copy")
        yield server, root / "dump" / "snapshot"


@pytest.mark.parametrize("paging", ["key-range", "offset", "single-stream"])
def test_a_triple_in_two_graphs_is_read_once(held_twice, tmp_path, paging):
    """A query without FROM sees every Virtuoso graph: without DISTINCT each link came back
    four times (two copies of the link times two of the type triple; measured)."""
    server, dump = held_twice
    source = endpoint(server.query_url, paging=paging, page_size=100)
    _, info = pull_spec(small_spec_doc(source, tmp_path, namespace=cases.PAGING_NS))
    assert info.vertex_counts["thing"] == 700  # paging_ntriples(blanks=0)
    assert info.edge_counts["thing.linked.thing"] == 700  # one link per thing
    assert snapshot_files(tmp_path / "snapshot") == snapshot_files(dump)
