"""Fixtures of the gremlin source tests: real Gremlin Servers (from servers/pytest_fixtures.py,
imported once by tests/conftest.py)
and a TCP relay between client and server that can cut the connection."""

from __future__ import annotations

from collections.abc import Iterator

import pytest
from gremlin_relay import Relay


@pytest.fixture
def relay(gremlin_server) -> Iterator[Relay]:
    """A relay in front of the session's plain Gremlin Server."""
    with Relay(gremlin_server.port) as r:
        yield r
