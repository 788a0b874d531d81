"""Session-scoped pytest fixtures that start the real servers on 127.0.0.1.

Import them into a conftest (``from servers.pytest_fixtures import *``). Each fixture
starts its server once per session and stops it at the end. Outside CI a missing
prerequisite (no Java, no Maven for the first jar fetch, no oxigraph or virtuoso-t binary) skips the
test with the reason; under ``CI=true`` it fails, as does any server that does not start.
"""

from __future__ import annotations

import contextlib
import os
from collections.abc import Iterator
from typing import TypeVar

import pytest

from servers._base import ManagedServer
from servers._browser import HeadlessChromium
from servers._errors import ServerError, ServerUnavailableError
from servers._gremlin import GremlinServer
from servers._rdf import FusekiServer, OxigraphServer
from servers._virtuoso import VirtuosoServer

__all__ = [
    "chromium",
    "fuseki_auth_server",
    "fuseki_server",
    "gremlin_secure_server",
    "gremlin_server",
    "oxigraph_server",
    "virtuoso_server",
]

S = TypeVar("S", bound=ManagedServer)

#: the user of ``fuseki_auth_server`` (the password is generated per session)
FUSEKI_USER = "graphmill"


def in_ci() -> bool:
    return os.environ.get("CI", "").strip().lower() in ("1", "true", "yes")


def serve(server: S) -> Iterator[S]:
    """Start ``server``, yield it, stop it; skip or fail as the module docstring says."""
    problem: str | None = None
    try:
        server.start()
    except ServerUnavailableError as error:
        if not in_ci():
            pytest.skip(f"{server.kind} server unavailable: {error}")
        problem = f"{server.kind} server unavailable under CI: {error}"
    except ServerError as error:
        problem = f"{server.kind} server did not start: {error}"
    if problem is not None:  # failed outside the except block: no chained traceback
        pytest.fail(problem, pytrace=False)
    try:
        yield server
    finally:
        server.stop()


#: ``with started(GremlinServer(...)) as server:`` for a test's own server, same rules
started = contextlib.contextmanager(serve)


@pytest.fixture(scope="session")
def gremlin_server() -> Iterator[GremlinServer]:
    """Gremlin Server: ``g`` (empty, writable), ``g_modern``, ``g_dead``; GraphBinary v1."""
    yield from serve(GremlinServer())


@pytest.fixture(scope="session")
def gremlin_secure_server() -> Iterator[GremlinServer]:
    """Gremlin Server with SASL authentication and TLS; see ``client_options()``."""
    yield from serve(GremlinServer("secure"))


@pytest.fixture(scope="session")
def fuseki_server() -> Iterator[FusekiServer]:
    """Fuseki with an empty, updatable in-memory dataset ``/ds``."""
    yield from serve(FusekiServer())


@pytest.fixture(scope="session")
def fuseki_auth_server() -> Iterator[FusekiServer]:
    """Fuseki that demands HTTP basic authentication; credentials in ``.auth``."""
    import secrets

    yield from serve(FusekiServer((FUSEKI_USER, secrets.token_urlsafe(18))))


@pytest.fixture(scope="session")
def oxigraph_server() -> Iterator[OxigraphServer]:
    """Oxigraph server on an empty store."""
    yield from serve(OxigraphServer())


@pytest.fixture(scope="session")
def chromium() -> Iterator[HeadlessChromium]:
    """Headless Chromium (Debian's package) with its DevTools protocol on 127.0.0.1."""
    yield from serve(HeadlessChromium())  # type: ignore[type-var]  # same start/stop/kind


@pytest.fixture(scope="session")
def virtuoso_server() -> Iterator[VirtuosoServer]:
    """Virtuoso 7 on an empty database, with its default result cap of 10,000 rows."""
    yield from serve(VirtuosoServer())
