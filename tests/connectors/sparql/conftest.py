"""Fixtures of the SPARQL endpoint tests.

The servers are the project's real test servers (``servers/``): ``fuseki_auth_server`` from
``servers.pytest_fixtures`` (imported by the root conftest), plus this package's own Oxigraph,
Fuseki and Virtuoso instances holding the small datasets of ``sparql_cases`` (own instances, so
that no other test's data can leak into these snapshots). Virtuoso keeps its default result
cap of 10,000 rows; it has no default graph of its own (a query without ``FROM`` sees every
graph), so the named-graph tests use ``quad_server``, which leaves it out. They start through
``servers.pytest_fixtures.started``: a missing prerequisite skips locally and fails under
``CI=true``; a server that does not start always fails.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest
import sparql_cases as cases

from servers.manage import (
    N_QUADS,
    N_TRIPLES,
    FusekiServer,
    OxigraphServer,
    SparqlServer,
    VirtuosoServer,
)
from servers.pytest_fixtures import started

SERVER_KINDS = ("oxigraph", "fuseki", "virtuoso")
#: servers whose default graph is a graph of its own, apart from the named graphs
QUAD_SERVER_KINDS = ("oxigraph", "fuseki")


@pytest.fixture(scope="session")
def case_files(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    """The small datasets as files: ``literals.nt``, ``graphs.nq``, ``paging.nt``."""
    root = tmp_path_factory.mktemp("sparql-cases")
    files = {
        "literals": (root / "literals.nt", cases.literal_ntriples()),
        "graphs": (root / "graphs.nq", cases.graph_nquads()),
        "paging": (root / "paging.nt", cases.paging_ntriples()),
    }
    for path, text in files.values():
        path.write_text(text, encoding="utf-8")
    return {name: path for name, (path, _) in files.items()}


@pytest.fixture(scope="session")
def case_oxigraph(case_files: dict[str, Path]) -> Iterator[OxigraphServer]:
    with started(OxigraphServer(preload=case_files.values())) as server:
        yield server


@pytest.fixture(scope="session")
def case_fuseki(case_files: dict[str, Path]) -> Iterator[FusekiServer]:
    with started(FusekiServer()) as server:
        for path in case_files.values():
            kind = N_QUADS if path.suffix == ".nq" else N_TRIPLES
            server.load(path.read_bytes(), content_type=kind)
        yield server


@pytest.fixture(params=SERVER_KINDS)
def case_server(request: pytest.FixtureRequest) -> SparqlServer:
    """Each server holding the case datasets, in turn."""
    return request.getfixturevalue(f"case_{request.param}")


@pytest.fixture(scope="session")
def case_virtuoso(case_files: dict[str, Path]) -> Iterator[VirtuosoServer]:
    with started(VirtuosoServer(preload=case_files.values())) as server:
        yield server


@pytest.fixture(params=QUAD_SERVER_KINDS)
def quad_server(request: pytest.FixtureRequest) -> SparqlServer:
    """Each server with a default graph apart from its named graphs, in turn."""
    return request.getfixturevalue(f"case_{request.param}")
