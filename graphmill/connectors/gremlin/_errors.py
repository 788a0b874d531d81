"""Driver errors as graphmill errors, and the retry policy of the gremlin source.

Transient: connection refused or lost, status 598 (the server's evaluation timeout), no
answer within ``request_timeout_s``; these are retried with exponential backoff and jitter.
Authentication failures (status 401/407, no credentials given) and other server errors are
raised at once. Every message is one line naming the server URL (never credentials).
"""

from __future__ import annotations

import asyncio
import ssl
import struct
from collections.abc import Callable
from typing import TypeVar

import aiohttp
import tenacity
from gremlin_python.driver.protocol import ConfigurationError, GremlinServerError

from graphmill.connectors.gremlin._settings import GremlinSettings
from graphmill.errors import (
    AuthenticationError,
    GraphmillError,
    MalformedResponseError,
    SourceServerError,
    SourceTimeoutError,
    SourceUnavailableError,
)

T = TypeVar("T")


def _lost_connection(exc: BaseException) -> bool:
    if isinstance(exc, GremlinServerError):
        return exc.status_code == 500 and "disconnected" in str(exc.status_message).lower()
    if isinstance(exc, RuntimeError):
        return "connection" in str(exc).lower() or "error on read" in str(exc).lower()
    if isinstance(exc, aiohttp.ClientSSLError | ssl.SSLError | aiohttp.WSServerHandshakeError):
        return False
    return isinstance(exc, aiohttp.ClientConnectionError | ConnectionError | OSError)


def is_transient(exc: BaseException) -> bool:
    """Connection refused or lost, server timeout (598), no answer in time: retry these."""
    if isinstance(exc, GremlinServerError) and exc.status_code == 598:
        return True
    return isinstance(exc, asyncio.TimeoutError | TimeoutError) or _lost_connection(exc)


def _short(text: object, limit: int = 200) -> str:
    line = " ".join(str(text).split())
    return line if len(line) <= limit else line[: limit - 3] + "..."


def as_graphmill_error(exc: BaseException, settings: GremlinSettings) -> GraphmillError:
    """The graphmill error for a driver exception: one line, the URL, what to do."""
    url = settings.url
    if isinstance(exc, GraphmillError):
        return exc
    if isinstance(exc, GremlinServerError):
        code = exc.status_code
        if code == 598:
            return SourceTimeoutError(
                "the server stopped a traversal at its evaluation timeout (status 598)",
                hint="raise source.request_timeout_s or split the work with source.partitions",
                source=url,
            )
        if code in (401, 407):
            return AuthenticationError(
                f"the server refused the credentials (status {code})",
                hint="check the user and password in the variables named by "
                "source.username_env and source.password_env",
                source=url,
            )
        if _lost_connection(exc):
            return _unavailable(exc, url)
        if code == 599:
            return SourceServerError(
                f"the server cannot send a value (status 599: {_short(exc.status_message)})",
                hint="leave the property that holds it out of the spec or convert it on the server",
                source=url,
            )
        return SourceServerError(
            f"the server answered with status {code}: {_short(exc.status_message)}",
            hint="check source.traversal_source and the server's log",
            source=url,
        )
    if isinstance(exc, ConfigurationError):
        return AuthenticationError(
            "the server asks for credentials and the spec names none",
            hint="set source.username_env and source.password_env",
            source=url,
        )
    if isinstance(exc, aiohttp.ClientConnectorCertificateError | ssl.SSLCertVerificationError):
        detail = getattr(exc, "certificate_error", exc)
        return SourceUnavailableError(
            f"the server's TLS certificate is not trusted ({_short(detail)})",
            hint="set source.tls.ca_file to the certificate of the authority that signed it, "
            "or source.tls.verify: false for a test server",
            source=url,
        )
    if isinstance(exc, aiohttp.ClientSSLError | ssl.SSLError):
        return SourceUnavailableError(
            f"the TLS handshake failed ({_short(exc)})",
            hint="check that the server speaks TLS on this port (wss://) and source.tls",
            source=url,
        )
    if isinstance(exc, aiohttp.WSServerHandshakeError):
        return SourceUnavailableError(
            f"the WebSocket handshake failed (HTTP {exc.status})",
            hint="check the url's path (Gremlin Server uses /gremlin)",
            source=url,
        )
    if isinstance(exc, ValueError | struct.error | UnicodeDecodeError):
        return MalformedResponseError(
            f"the server sent a value gremlinpython cannot read ({_short(exc)})",
            hint="leave the property that holds it out of the spec (for example a Java "
            "LocalDateTime), or convert it on the server",
            source=url,
        )
    if isinstance(exc, asyncio.TimeoutError | TimeoutError):
        return SourceTimeoutError(
            "the server did not answer in time",
            hint="raise source.request_timeout_s or check the server's load",
            source=url,
        )
    return _unavailable(exc, url)


def _unavailable(exc: BaseException, url: str) -> SourceUnavailableError:
    detail = _short(exc) or type(exc).__name__
    return SourceUnavailableError(
        f"cannot reach the Gremlin Server or the connection was lost ({detail})",
        hint="check that the server runs and the url is right; "
        "pulling again resumes from the last checkpoint",
        source=url,
    )


def call_with_retries(settings: GremlinSettings, fn: Callable[[], T]) -> T:
    """``fn()`` retried on transient errors with exponential backoff and jitter; the last
    error, or any other, is raised as a graphmill error."""
    retrying = tenacity.Retrying(
        stop=tenacity.stop_after_attempt(settings.attempts),
        wait=tenacity.wait_exponential(multiplier=settings.initial_wait_s, max=settings.max_wait_s)
        + tenacity.wait_random(0, settings.initial_wait_s),
        retry=tenacity.retry_if_exception(is_transient),
        reraise=True,
    )
    try:
        return retrying(fn)
    except Exception as exc:
        raise as_graphmill_error(exc, settings) from exc
