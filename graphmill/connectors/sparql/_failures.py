"""HTTP failures -> graphmill errors, each with its exit code and a one-line message.

=================================  ===========================  ====  ==========
failure                            error                        exit  retried
=================================  ===========================  ====  ==========
connection refused, unknown host   SourceUnavailableError       3     yes
TLS certificate not accepted       SourceUnavailableError       3     no
connection broken mid-response     SourceUnavailableError       3     yes
connect timeout                    SourceTimeoutError           5     yes
no answer within the timeout       SourceTimeoutError           5     no
HTTP 401, 403                      AuthenticationError          4     no
HTTP 404                           SourceUnavailableError       3     no
HTTP 5xx                           SourceServerError            6     yes
HTTP 5xx: a sorted-rows cap        MalformedResponseError       7     no
other HTTP 4xx                     SourceServerError            6     no
=================================  ===========================  ====  ==========

A failure worth another try comes wrapped in :class:`TransientError`; the retry loop raises
the error inside once the tries are spent. Messages name the endpoint, never credentials.
"""

from __future__ import annotations

import httpx

from graphmill.errors import (
    AuthenticationError,
    GraphmillError,
    MalformedResponseError,
    SourceServerError,
    SourceTimeoutError,
    SourceUnavailableError,
)

#: Virtuoso's error code for a sorted window (OFFSET + LIMIT under ORDER BY) over its cap
_SORTED_ROWS_CAP = "SR353"


class TransientError(Exception):
    """A failure worth another try; carries the error to raise when tries run out."""

    def __init__(self, error: GraphmillError) -> None:
        super().__init__(error.message)
        self.error = error


def transport_error(exc: httpx.HTTPError, url: str) -> Exception:
    """The error (or TransientError) for an httpx transport failure talking to ``url``."""
    if isinstance(exc, httpx.ConnectError) and "CERTIFICATE" in str(exc).upper():
        return SourceUnavailableError(
            f"the endpoint's TLS certificate was not accepted ({_reason(exc)})",
            source=url,
            hint="name the CA that signed it in source.tls.ca_file",
        )
    if isinstance(exc, httpx.ConnectTimeout | httpx.PoolTimeout):
        return TransientError(
            SourceTimeoutError(
                "connecting to the endpoint timed out",
                source=url,
                hint="check that the server is up and reachable",
            )
        )
    if isinstance(exc, httpx.TimeoutException):
        return SourceTimeoutError(
            "the endpoint did not answer within request_timeout_s",
            source=url,
            hint="raise source.request_timeout_s or lower source.page_size",
        )
    if isinstance(exc, httpx.ConnectError):
        return TransientError(
            SourceUnavailableError(
                f"cannot connect to the endpoint ({_reason(exc)})",
                source=url,
                hint="check that the server is running and that query_url is right",
            )
        )
    if isinstance(exc, httpx.TransportError):
        return TransientError(
            SourceUnavailableError(
                f"the connection to the endpoint broke off ({_reason(exc)})",
                source=url,
                hint="run the pull again: it resumes after the last staged page",
            )
        )
    return SourceUnavailableError(f"HTTP request failed ({_reason(exc)})", source=url)


def _reason(exc: BaseException) -> str:
    text = str(exc).strip() or type(exc).__name__
    return text.splitlines()[0][:160]


def status_error(response: httpx.Response, url: str) -> Exception:
    """The error (or TransientError) for an HTTP error status; ``response`` has been read."""
    code = response.status_code
    said = " ".join(response.text[:300].split())[:160]
    detail = f"HTTP {code} {response.reason_phrase}" + (f": {said}" if said else "")
    if code in (401, 403):
        return AuthenticationError(
            f"the endpoint refused the credentials ({detail})",
            source=url,
            hint="check the user name and password in the variables named by "
            "source.username_env and source.password_env",
        )
    if code >= 500 and _SORTED_ROWS_CAP in said:
        return MalformedResponseError(
            f"the endpoint caps sorted results and refused a page ({detail})",
            source=url,
            hint="use source.paging: key-range (offset paging needs ORDER BY over every "
            "row before the page; Virtuoso allows 10,000 by default, MaxSortedTopRows)",
        )
    if code >= 500:
        return TransientError(
            SourceServerError(
                f"the endpoint answered {detail}",
                source=url,
                hint="check the server's log, or try again later",
            )
        )
    if code == 404:
        return SourceUnavailableError(
            f"no SPARQL endpoint here ({detail})", source=url, hint="check source.query_url"
        )
    return SourceServerError(
        f"the endpoint refused the query ({detail})",
        source=url,
        hint="check the spec's IRIs; report the query if it is valid",
    )
