"""The ``source`` block of a gremlin spec, checked once and frozen.

Credentials are read from the environment variables the spec names and are kept out of
``repr``; the URL is refused when it carries user information, so it is safe to print.
"""

from __future__ import annotations

import os
import ssl
from dataclasses import dataclass
from pathlib import Path
from urllib.parse import urlsplit

from graphmill.errors import AuthenticationError, SpecError
from graphmill.spec import PipelineSpec

#: client-side cap on one WebSocket frame; a frame holds ``batch_size`` results
MAX_FRAME_BYTES = 64 * 1024 * 1024


@dataclass(frozen=True)
class GremlinSettings:
    """Connection and paging options of a gremlin source (defaults as in the spec schema)."""

    url: str
    traversal_source: str = "g"
    page_size: int = 10_000
    partitions: int = 1
    concurrency: int = 2
    request_timeout_s: float = 120.0
    batch_size: int = 10000
    meta_properties: str = "drop"
    schema_sample: int = 1000
    attempts: int = 6
    initial_wait_s: float = 0.5
    max_wait_s: float = 30.0
    tls_verify: bool = True
    ca_file: Path | None = None
    username_env: str | None = None
    password_env: str | None = None

    @classmethod
    def from_spec(cls, spec: PipelineSpec) -> GremlinSettings:
        """Check ``spec.source``; raise :class:`SpecError` naming the key path."""
        src = spec.source
        url = str(src["url"])
        check_url(url)
        tls = src.get("tls", {})
        retries = src.get("retries", {})
        ca_file = spec.resolve_path(tls["ca_file"]) if "ca_file" in tls else None
        if ca_file is not None and not ca_file.is_file():
            raise SpecError(
                f"CA certificate file not found: {ca_file}",
                key_path="source.tls.ca_file",
                hint="give the PEM file of the certificate authority that signed the server's key",
            )
        if tls and not url.startswith("wss://"):
            raise SpecError(
                "TLS settings need a wss:// url", key_path="source.tls", hint="use wss://"
            )
        if ("username_env" in src) != ("password_env" in src):
            raise SpecError(
                "username_env and password_env go together",
                key_path="source.username_env" if "password_env" in src else "source.password_env",
            )
        return cls(
            url=url,
            traversal_source=src.get("traversal_source", "g"),
            page_size=src.get("page_size", 10_000),
            partitions=src.get("partitions", 1),
            concurrency=src.get("concurrency", 2),
            request_timeout_s=float(src.get("request_timeout_s", 120)),
            batch_size=src.get("batch_size", 10000),
            meta_properties=src.get("meta_properties", "drop"),
            schema_sample=src.get("schema_sample", 1000),
            attempts=retries.get("attempts", 6),
            initial_wait_s=float(retries.get("initial_wait_s", 0.5)),
            max_wait_s=float(retries.get("max_wait_s", 30)),
            tls_verify=tls.get("verify", True),
            ca_file=ca_file,
            username_env=src.get("username_env"),
            password_env=src.get("password_env"),
        )

    @property
    def location(self) -> str:
        """URL and traversal source: publishable (never holds credentials)."""
        return f"{self.url} traversal_source={self.traversal_source}"

    def credentials(self) -> tuple[str, str]:
        """(user, password) from the environment, or ("", "") when the spec names none."""
        if not self.username_env or not self.password_env:
            return "", ""
        missing = [n for n in (self.username_env, self.password_env) if not os.environ.get(n)]
        if missing:
            raise AuthenticationError(
                f"environment variable {missing[0]} (named by the spec) is not set",
                source=self.url,
                hint=f"export {missing[0]} before pulling",
            )
        return os.environ[self.username_env], os.environ[self.password_env]

    def ssl_context(self) -> ssl.SSLContext | None:
        """None for ws://; for wss://, a verifying context (with ``ca_file`` if given) unless
        the spec says ``tls.verify: false``."""
        if not self.url.startswith("wss://"):
            return None
        if not self.tls_verify:
            context = ssl.create_default_context()
            context.check_hostname = False
            context.verify_mode = ssl.CERT_NONE
            return context
        cafile = str(self.ca_file) if self.ca_file else None
        return ssl.create_default_context(cafile=cafile)


def check_url(url: str) -> None:
    """Refuse a URL with user information; never echo it, it may hold a password."""
    parts = urlsplit(url)
    if "@" in parts.netloc or parts.username or parts.password:
        raise SpecError(
            "the url must not contain a user name or password",
            key_path="source.url",
            hint="name environment variables in source.username_env and source.password_env",
        )
    if parts.scheme not in ("ws", "wss") or not parts.hostname:
        raise SpecError(
            "the url must look like ws://host:port/gremlin or wss://host:port/gremlin",
            key_path="source.url",
        )
