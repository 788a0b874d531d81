"""Smoke tests of the real test servers: each starts, answers, and says what it should.

Fixtures come from ``servers/pytest_fixtures.py`` (imported by ``tests/conftest.py``).
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

import httpx
import pytest

from servers.manage import (
    FusekiServer,
    GremlinServer,
    OxigraphServer,
    ServerError,
    SparqlServer,
    VirtuosoServer,
)
from servers.pytest_fixtures import started

if TYPE_CHECKING:
    from gremlin_python.driver.client import Client

pytestmark = pytest.mark.servers

# TinkerPop documentation, data page: the "modern" toy graph and the Grateful Dead graph
PUBLISHED_COUNTS = {"g_modern": (6, 6), "g_dead": (808, 8049)}

THREE_TRIPLES = """\
<http://example.org/a> <http://example.org/knows> <http://example.org/b> .
<http://example.org/b> <http://example.org/knows> <http://example.org/c> .
<http://example.org/c> <http://www.w3.org/2000/01/rdf-schema#label> "c" .
"""
COUNT_QUERY = "SELECT (COUNT(*) AS ?n) WHERE { ?s ?p ?o }"


def _gremlin_client(server: GremlinServer, **options: Any) -> Client:
    from gremlin_python.driver.client import Client

    return Client(server.url, "g", **{**server.client_options(), **options})


def _count_triples(server: SparqlServer) -> int:
    response = httpx.post(
        server.query_url,
        data={"query": COUNT_QUERY},
        headers={"Accept": "application/sparql-results+json"},
        auth=server.auth,
        timeout=30.0,
    )
    response.raise_for_status()
    return int(response.json()["results"]["bindings"][0]["n"]["value"])


@pytest.mark.parametrize("source", sorted(PUBLISHED_COUNTS))
def test_gremlin_sample_graphs_have_published_counts(
    gremlin_server: GremlinServer, source: str
) -> None:
    vertices, edges = PUBLISHED_COUNTS[source]
    assert gremlin_server.submit(f"{source}.V().count()") == [vertices]
    assert gremlin_server.submit(f"{source}.E().count()") == [edges]


def test_gremlin_server_binds_only_loopback(gremlin_server: GremlinServer) -> None:
    assert gremlin_server.host == "127.0.0.1"
    assert gremlin_server.url == f"ws://127.0.0.1:{gremlin_server.port}/gremlin"


def test_gremlin_request_timeout_is_status_598(gremlin_server: GremlinServer) -> None:
    from gremlin_python.driver.protocol import GremlinServerError

    with pytest.raises(GremlinServerError) as caught:
        gremlin_server.submit("Thread.sleep(3000); 1", request_options={"evaluationTimeout": 200})
    assert caught.value.status_code == 598


def test_gremlin_secure_accepts_right_password_over_tls(
    gremlin_secure_server: GremlinServer,
) -> None:
    assert gremlin_secure_server.url.startswith("wss://127.0.0.1:")
    assert gremlin_secure_server.cert_path is not None
    assert gremlin_secure_server.cert_path.read_text().startswith("-----BEGIN CERTIFICATE-----")
    client = _gremlin_client(gremlin_secure_server)
    try:
        assert client.submit("g_modern.V().count()").all().result() == [6]
    finally:
        client.close()


def test_gremlin_secure_refuses_wrong_password(gremlin_secure_server: GremlinServer) -> None:
    from gremlin_python.driver.protocol import GremlinServerError

    client = _gremlin_client(gremlin_secure_server, password="not-the-password")
    try:
        with pytest.raises(GremlinServerError) as caught:
            client.submit("1+1").all().result()
    finally:
        client.close()
    assert caught.value.status_code == 401


def test_gremlin_secure_log_holds_no_password(gremlin_secure_server: GremlinServer) -> None:
    assert gremlin_secure_server.password is not None
    assert gremlin_secure_server.password not in gremlin_secure_server.log_path.read_text()


def test_gremlin_server_timeout_and_persistence_across_restart(tmp_path: Path) -> None:
    """evaluationTimeout in the config gives status 598; `graph` survives a clean restart."""
    from gremlin_python.driver.protocol import GremlinServerError

    first = GremlinServer(data_dir=tmp_path, evaluation_timeout_ms=1500)
    # the first script's Groovy compilation counts against the timeout: keep it above ~1 s
    with started(first) as server:
        server.submit("g.addV('person').property('name', 'ada').iterate()")
        with pytest.raises(GremlinServerError) as caught:
            server.submit("Thread.sleep(5000); 1")
        assert caught.value.status_code == 598
    assert (tmp_path / "graph.json").is_file()
    with started(GremlinServer(data_dir=tmp_path)) as server:
        assert server.submit("g.V().values('name')") == ["ada"]


def test_fuseki_answers_after_gsp_load(fuseki_server: FusekiServer) -> None:
    assert fuseki_server.url.startswith("http://127.0.0.1:")
    fuseki_server.load(THREE_TRIPLES)
    assert _count_triples(fuseki_server) == 3
    assert fuseki_server.ask("ASK { <http://example.org/a> <http://example.org/knows> ?x }")


def test_fuseki_basic_auth(fuseki_auth_server: FusekiServer) -> None:
    refused = httpx.get(fuseki_auth_server.query_url, params={"query": "ASK {}"}, timeout=30.0)
    assert refused.status_code == 401
    assert fuseki_auth_server.auth is not None
    user, _ = fuseki_auth_server.auth
    wrong = httpx.get(
        fuseki_auth_server.query_url,
        params={"query": "ASK {}"},
        auth=(user, "not-the-password"),
        timeout=30.0,
    )
    assert wrong.status_code == 401
    fuseki_auth_server.load(THREE_TRIPLES)
    assert _count_triples(fuseki_auth_server) == 3


def test_oxigraph_answers_after_http_load(oxigraph_server: OxigraphServer) -> None:
    assert oxigraph_server.url.startswith("http://127.0.0.1:")
    oxigraph_server.load(THREE_TRIPLES)
    assert _count_triples(oxigraph_server) == 3


def test_oxigraph_preloads_with_bulk_loader(tmp_path: Path) -> None:
    data = tmp_path / "three.nt"
    data.write_text(THREE_TRIPLES)
    with started(OxigraphServer(preload=[data])) as server:
        assert _count_triples(server) == 3


def _count_in(query_url: str, graph: str) -> int:
    """Triples in one graph (Virtuoso's own system graphs hold triples of their own)."""
    response = httpx.post(
        query_url,
        data={"query": f"SELECT (COUNT(*) AS ?n) WHERE {{ GRAPH <{graph}> {{ ?s ?p ?o }} }}"},
        headers={"Accept": "application/sparql-results+json"},
        timeout=30.0,
    )
    response.raise_for_status()
    return int(response.json()["results"]["bindings"][0]["n"]["value"])


def test_virtuoso_loads_over_http_with_its_generated_password(
    virtuoso_server: VirtuosoServer,
) -> None:
    assert virtuoso_server.query_url == f"http://127.0.0.1:{virtuoso_server.port}/sparql"
    virtuoso_server.load(THREE_TRIPLES, graph="http://example.org/g")
    assert _count_in(virtuoso_server.query_url, "http://example.org/g") == 3
    assert virtuoso_server.ask("ASK { <http://example.org/a> <http://example.org/knows> ?x }")
    # the well-known initial password no longer works; the generated one is in no log
    refused = httpx.post(
        f"{virtuoso_server.url}/sparql-graph-crud-auth",
        params={"graph-uri": "http://example.org/g"},
        content=THREE_TRIPLES.encode(),
        headers={"Content-Type": "application/n-triples"},
        auth=httpx.DigestAuth("dba", "dba"),
        timeout=30.0,
    )
    assert refused.status_code == 401
    assert virtuoso_server.password not in virtuoso_server.log_path.read_text()
    ini = (virtuoso_server.log_path.parent / "virtuoso.ini").read_text()
    assert "ResultSetMaxRows = 10000" in ini  # the server's default cap, kept on purpose
    assert f"ServerPort = 127.0.0.1:{virtuoso_server.sql_port}" in ini


def test_virtuoso_from_the_command_line_bulk_loads(tmp_path: Path) -> None:
    """`python -m servers.manage start virtuoso --load F` bulk-loads F, serves, stops on TERM."""
    import re
    import shutil
    import signal
    import subprocess
    import sys

    from servers._virtuoso import DEFAULT_GRAPH
    from servers.pytest_fixtures import in_ci

    if shutil.which("virtuoso-t") is None and not in_ci():
        pytest.skip("virtuoso-t is not installed (apt-get install virtuoso-opensource)")
    data = tmp_path / "three.nt"
    data.write_text(THREE_TRIPLES)
    command = [sys.executable, "-m", "servers.manage", "start", "virtuoso", "--load", str(data)]
    process = subprocess.Popen(command, stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True)
    try:
        assert process.stdout is not None
        first = process.stdout.readline()  # blocks until ready (or the start failed)
        assert first.startswith("virtuoso server ready in"), first
        url = re.search(r"http://127\.0\.0\.1:\d+", first)
        assert url is not None
        lines = [process.stdout.readline() for _ in range(3)]
        assert any("result cap: 10000 rows" in line for line in lines), lines
        assert _count_in(f"{url.group(0)}/sparql", DEFAULT_GRAPH) == 3
    finally:
        process.send_signal(signal.SIGTERM)
        process.wait(timeout=60)
    assert process.returncode == 0


def test_virtuoso_names_a_file_its_bulk_loader_refuses(tmp_path: Path) -> None:
    import shutil

    from servers.pytest_fixtures import in_ci

    if shutil.which("virtuoso-t") is None and not in_ci():
        pytest.skip("virtuoso-t is not installed (apt-get install virtuoso-opensource)")
    bad = tmp_path / "bad.nt"
    bad.write_text('<http://example.org/a> <http://example.org/b> "unterminated .\n')
    server = VirtuosoServer(preload=[bad])
    with pytest.raises(ServerError, match=r"LOAD-ERROR .*bad\.nt.*Unterminated"):
        server.start()
    assert not server.running and server.run_dir is None  # stopped and cleaned up
