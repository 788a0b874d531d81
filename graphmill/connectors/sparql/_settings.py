"""The ``sparql-endpoint`` source section, checked and resolved into :class:`EndpointSettings`.

Credentials are read from the environment variables the spec names (``username_env``,
``password_env``) and are kept out of :meth:`EndpointSettings.describe`, which is what
provenance and error messages use. A ``query_url`` holding credentials is refused.
"""

from __future__ import annotations

import os
import ssl
from dataclasses import dataclass, field
from typing import Any
from urllib.parse import urlsplit

from graphmill.errors import AuthenticationError, SpecError

DEFAULT_PAGE_SIZE = 100_000
DEFAULT_TIMEOUT_S = 300.0


@dataclass(frozen=True)
class RetryPolicy:
    """Exponential backoff with jitter between ``attempts`` tries (tenacity)."""

    attempts: int = 6
    initial_wait_s: float = 0.5
    max_wait_s: float = 30.0


@dataclass(frozen=True)
class EndpointSettings:
    """Everything the HTTP client and the pager need; ``password`` never leaves this object."""

    query_url: str
    paging: str = "auto"
    page_size: int = DEFAULT_PAGE_SIZE
    results_format: str = "tsv"
    method: str = "auto"
    request_timeout_s: float = DEFAULT_TIMEOUT_S
    retries: RetryPolicy = field(default_factory=RetryPolicy)
    verify: bool | str = True  # True, False, or a CA file path
    username: str | None = field(default=None, repr=False)
    password: str | None = field(default=None, repr=False)

    def ssl_verify(self) -> bool | ssl.SSLContext:
        """The ``verify`` argument for httpx: a bool, or a context trusting the CA file."""
        if isinstance(self.verify, str):
            return ssl.create_default_context(cafile=self.verify)
        return self.verify

    def describe(self) -> dict[str, Any]:
        """Publishable settings (no credentials; only whether basic auth is used)."""
        return {
            "paging": self.paging,
            "page_size": self.page_size,
            "results_format": self.results_format,
            "method": self.method,
            "request_timeout_s": self.request_timeout_s,
            "basic_auth": self.username is not None,
            "tls_verify": self.verify if isinstance(self.verify, bool) else "ca_file",
        }


def check_query_url(url: str) -> str:
    """Return ``url`` if it is an http(s) URL with a host and no user info; else SpecError."""
    key = "source.query_url"
    try:
        parts = urlsplit(url)
        _ = parts.port  # a port that is not a number raises here
    except ValueError as exc:
        raise SpecError(f"query_url is not a URL: {exc}", key_path=key) from exc
    if parts.scheme not in ("http", "https") or not parts.hostname:
        raise SpecError(
            "query_url must be an http:// or https:// URL with a host",
            key_path=key,
            hint="write the endpoint's full URL, e.g. http://127.0.0.1:7878/query",
        )
    if parts.username is not None or parts.password is not None or "@" in parts.netloc:
        raise SpecError(
            "query_url must not hold credentials",
            key_path=key,
            hint="remove them from the URL and name environment variables in "
            "source.username_env and source.password_env",
        )
    if parts.fragment:
        raise SpecError("query_url must not have a #fragment", key_path=key)
    return url


def _from_env(name: str | None, key: str) -> str | None:
    if name is None:
        return None
    value = os.environ.get(name)
    if value is None:
        raise AuthenticationError(
            f"the environment variable {name} is not set",
            key_path=f"source.{key}",
            hint=f"export {name} before running graphmill",
        )
    return value


def endpoint_settings(source: dict[str, Any]) -> EndpointSettings:
    """Resolve the (schema-checked) source section; reads credentials from the environment."""
    url = check_query_url(str(source["query_url"]))
    fmt = source.get("results_format", "auto")
    if fmt == "csv":
        raise SpecError(
            "SPARQL CSV results do not say which values are IRIs, literals or blank nodes, "
            "nor their datatypes and languages (SPARQL 1.1 CSV and TSV Formats, section 2)",
            key_path="source.results_format",
            hint="use tsv (streamed) or json",
        )
    user_env, password_env = source.get("username_env"), source.get("password_env")
    if (user_env is None) != (password_env is None):
        raise SpecError(
            "basic authentication needs both username_env and password_env",
            key_path="source.username_env" if user_env is None else "source.password_env",
        )
    tls = source.get("tls", {})
    verify: bool | str = bool(tls.get("verify", True))
    if verify and "ca_file" in tls:
        verify = str(tls["ca_file"])
        if not os.path.isfile(verify):
            raise SpecError(f"the CA file {verify!r} does not exist", key_path="source.tls.ca_file")
    retry = source.get("retries", {})
    return EndpointSettings(
        query_url=url,
        paging=source.get("paging", "auto"),
        page_size=int(source.get("page_size", DEFAULT_PAGE_SIZE)),
        results_format="tsv" if fmt == "auto" else fmt,
        method=source.get("method", "auto"),
        request_timeout_s=float(source.get("request_timeout_s", DEFAULT_TIMEOUT_S)),
        retries=RetryPolicy(
            attempts=int(retry.get("attempts", 6)),
            initial_wait_s=float(retry.get("initial_wait_s", 0.5)),
            max_wait_s=float(retry.get("max_wait_s", 30.0)),
        ),
        verify=verify,
        username=_from_env(user_env, "username_env"),
        password=_from_env(password_env, "password_env"),
    )
