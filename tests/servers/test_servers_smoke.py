"""Smoke tests of the real test servers: each starts, answers, and says what it should.

Fixtures come from ``servers/pytest_fixtures.py`` (imported by ``tests/conftest.py``).
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

import httpx
import pytest

from servers.manage import FusekiServer, GremlinServer, OxigraphServer, SparqlServer
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
