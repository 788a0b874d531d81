"""The errors of the test servers."""

from __future__ import annotations


class ServerError(RuntimeError):
    """A test server could not be prepared, started or stopped."""


class ServerUnavailableError(ServerError):
    """A prerequisite is missing on this machine (Java, Maven, a binary, the jar download).

    Test fixtures may skip on this outside CI; every other ServerError is a real failure.
    """
