"""Fixtures of the gremlin source tests: real Gremlin Servers (from servers/pytest_fixtures.py)
and a TCP relay between client and server that can cut the connection."""

from __future__ import annotations

from collections.abc import Iterator

import pytest
from gremlin_relay import Relay

from servers.pytest_fixtures import gremlin_secure_server, gremlin_server  # noqa: F401


@pytest.fixture
def relay(gremlin_server) -> Iterator[Relay]:  # noqa: F811
    """A relay in front of the session's plain Gremlin Server."""
    with Relay(gremlin_server.port) as r:
        yield r
