"""SPARQL 1.1 Protocol over HTTP (httpx): one SELECT in, one term table out, with retries.

* GET with ``query=`` for short queries, POST ``application/sparql-query`` for long ones or
  when ``method: post`` (form-encoded POST if the server answers 415);
* ``Accept: text/tab-separated-values`` (TSV) or ``application/sparql-results+json``;
* TSV is parsed while it streams, in pieces cut at line boundaries, so the client holds the
  parsed Arrow columns plus one piece of text, never the whole body; JSON is parsed whole;
* connection errors, dropped connections and HTTP 5xx are retried with exponential backoff
  and jitter; then they become the graphmill error for the case (:mod:`._failures`).

Messages name the endpoint URL (which holds no credentials: see :mod:`._settings`).
"""

from __future__ import annotations

import random
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import Protocol, TypeVar
from urllib.parse import quote

import httpx
import pyarrow as pa
import pyarrow.compute as pc
import tenacity

from graphmill._version import __version__
from graphmill.connectors.rdf._terms import TERM_SUFFIXES, read_json_results, read_tsv_results
from graphmill.connectors.rdf._xsd import XSD
from graphmill.connectors.sparql._failures import (
    TransientError,
    status_error,
    transport_error,
)
from graphmill.connectors.sparql._settings import EndpointSettings
from graphmill.errors import MalformedResponseError

#: the response header by which Virtuoso names its result cap when an answer reaches it
CAP_HEADER = "x-sparql-maxrows"
#: ``(STR(?v) AS ?v_lexical)`` beside ``?v``: the text of ``v``'s xsd:double and xsd:float
#: values (Virtuoso writes those with 6 significant digits in results, STR() with up to 16)
LEXICAL_SUFFIX = "_lexical"
_FLOATING = (XSD + "double", XSD + "float")
PIECE_BYTES = 2 << 20  # TSV text parsed at a time (tests lower it)
MAX_GET_URL = 2000  # longer queries go by POST (common server and proxy URL limits)
T = TypeVar("T")
_ACCEPT = {"tsv": "text/tab-separated-values", "json": "application/sparql-results+json"}
_CONTENT = {
    "tsv": ("text/tab-separated-values",),
    "json": ("application/sparql-results+json", "application/json"),
}


class Collector(Protocol):
    """Receives the term tables of one response as they are parsed."""

    def add(self, terms: pa.Table) -> None: ...


class TableCollector:
    """Keeps every piece; :meth:`table` concatenates them."""

    def __init__(self) -> None:
        self.pieces: list[pa.Table] = []

    def add(self, terms: pa.Table) -> None:
        self.pieces.append(terms)

    def table(self) -> pa.Table:
        return pa.concat_tables(self.pieces) if len(self.pieces) > 1 else self.pieces[0]


@dataclass(frozen=True)
class ServerInfo:
    """What the endpoint says it is: ``oxigraph``, ``fuseki``, ``virtuoso`` or ``unknown``."""

    product: str
    server_header: str


def identify(headers: httpx.Headers) -> ServerInfo:
    """Name the server product from response headers (Fuseki sends no Server header, but a
    ``Fuseki-Request-Id``; Oxigraph sends ``Server: Oxigraph/<version>``)."""
    server = headers.get("server", "")
    low = server.lower()
    if "oxigraph" in low:
        return ServerInfo("oxigraph", server)
    if "virtuoso" in low:
        return ServerInfo("virtuoso", server)
    if "fuseki-request-id" in headers or "fuseki" in low or "jena" in low:
        return ServerInfo("fuseki", server)
    return ServerInfo("unknown", server)


class SparqlClient:
    """A SPARQL endpoint client for one source; open it before use, close it after."""

    def __init__(self, settings: EndpointSettings) -> None:
        self.settings = settings
        self.url = settings.query_url
        self._http: httpx.Client | None = None
        self.requests = 0
        #: the row cap a server announced (Virtuoso: ``X-SPARQL-MaxRows`` on a capped answer)
        self.result_cap: int | None = None

    def open(self) -> None:
        s = self.settings
        auth = httpx.BasicAuth(s.username, s.password or "") if s.username is not None else None
        self._http = httpx.Client(
            auth=auth,
            verify=s.ssl_verify(),
            timeout=httpx.Timeout(s.request_timeout_s, connect=min(30.0, s.request_timeout_s)),
            headers={"User-Agent": f"graphmill/{__version__}"},
            follow_redirects=True,
        )

    def close(self) -> None:
        if self._http is not None:
            self._http.close()
            self._http = None

    def probe(self) -> ServerInfo:
        """Send ``ASK {}`` (checks the URL and the credentials) and identify the server."""
        response = self._retrying(lambda: self._ask("ASK {}"))
        return identify(response)

    def select(self, query: str, collector: Callable[[], Collector], *, where: str) -> Collector:
        """Run a SELECT; feed its term tables to a fresh ``collector()`` per try; return it."""

        def attempt() -> Collector:
            sink = collector()
            self._send(query, sink, where)
            return sink

        return self._retrying(attempt)

    def select_table(self, query: str, *, where: str) -> pa.Table:
        """Run a SELECT and return its whole term table."""
        sink = self.select(query, TableCollector, where=where)
        assert isinstance(sink, TableCollector)
        return sink.table()

    # ------------------------------------------------------------------ internals

    def _retrying(self, action: Callable[[], T]) -> T:
        policy = self.settings.retries
        retrying = tenacity.Retrying(
            stop=tenacity.stop_after_attempt(policy.attempts),
            wait=tenacity.wait_exponential_jitter(
                multiplier=policy.initial_wait_s,
                max=policy.max_wait_s,
                jitter=policy.initial_wait_s,
            ),
            retry=tenacity.retry_if_exception_type(TransientError),
            reraise=True,
        )
        try:
            return retrying(action)
        except TransientError as exc:
            error = exc.error
            error.message += f" (after {policy.attempts} tries)"
            raise error from exc.__cause__

    def _request(self, query: str, accept: str, *, form: bool = False) -> httpx.Request:
        assert self._http is not None, "open() the client first"
        headers = {"Accept": accept}
        method = self.settings.method
        long_query = len(self.url) + len(quote(query, safe="")) + 7 > MAX_GET_URL
        if method == "get" or (method == "auto" and not long_query):
            return self._http.build_request(
                "GET", self.url, params={"query": query}, headers=headers
            )
        if form:
            return self._http.build_request(
                "POST", self.url, data={"query": query}, headers=headers
            )
        headers["Content-Type"] = "application/sparql-query; charset=utf-8"
        return self._http.build_request(
            "POST", self.url, content=query.encode("utf-8"), headers=headers
        )

    def _ask(self, query: str) -> httpx.Headers:
        with self._exchange(query, _ACCEPT["json"]) as response:
            response.read()
            return response.headers

    def _send(self, query: str, sink: Collector, where: str) -> None:
        for terms in self.stream(query, where=where):
            sink.add(terms)

    def stream(self, query: str, *, where: str) -> Iterator[pa.Table]:
        """Run a SELECT once (no retry) and yield its term tables as they are parsed.

        Raises :class:`TransientError` for what is worth another try (the caller decides).
        """
        fmt = self.settings.results_format
        with self._exchange(query, _ACCEPT[fmt]) as response:
            kind = response.headers.get("content-type", "").split(";")[0].strip().lower()
            if kind not in _CONTENT[fmt]:
                raise MalformedResponseError(
                    f"the endpoint answered with content type {kind or 'none'!r}, "
                    f"not {_ACCEPT[fmt]!r}",
                    source=self.url,
                    hint="check that query_url is the SPARQL query endpoint",
                )
            chunks = response.iter_bytes()  # as they arrive
            if fmt == "tsv":
                yield from map(restore_lexical, _tsv_pieces(chunks, where))
            else:
                yield restore_lexical(read_json_results(b"".join(chunks), where=where))

    def wait_before(self, attempt: int) -> float:
        """Seconds to wait before try ``attempt + 1`` (exponential, with jitter)."""
        policy = self.settings.retries
        exponential = policy.initial_wait_s * 2 ** max(0, attempt - 1)
        return min(policy.max_wait_s, exponential + random.uniform(0, policy.initial_wait_s))

    def _exchange(self, query: str, accept: str) -> _Exchange:
        return _Exchange(self, query, accept)


class _Exchange:
    """One request/response as a context manager that maps httpx failures to ours."""

    def __init__(self, client: SparqlClient, query: str, accept: str) -> None:
        self.client, self.query, self.accept = client, query, accept
        self._stream: httpx.Response | None = None

    def __enter__(self) -> httpx.Response:
        http = self.client._http
        assert http is not None
        try:
            request = self.client._request(self.query, self.accept)
            response = http.send(request, stream=True)
            if response.status_code == 415 and request.method == "POST":
                response.close()
                request = self.client._request(self.query, self.accept, form=True)
                response = http.send(request, stream=True)
        except httpx.HTTPError as exc:
            raise transport_error(exc, self.client.url) from exc
        self.client.requests += 1
        self._stream = response
        announced = response.headers.get(CAP_HEADER, "").strip()
        if announced.isdigit() and int(announced) > 0:
            self.client.result_cap = int(announced)
        if response.status_code >= 400:
            response.read()
            response.close()
            raise status_error(response, self.client.url)
        return response

    def __exit__(self, exc_type: object, exc: BaseException | None, tb: object) -> None:
        assert self._stream is not None
        self._stream.close()
        if isinstance(exc, httpx.HTTPError):
            raise transport_error(exc, self.client.url) from exc


def restore_lexical(terms: pa.Table) -> pa.Table:
    """For each ``v_lexical`` variable (see ``LEXICAL_SUFFIX``): take its text as ``v``'s for
    xsd:double and xsd:float literals, then drop its columns."""
    for name in [n for n in terms.column_names if n.endswith(LEXICAL_SUFFIX)]:
        base = name[: -len(LEXICAL_SUFFIX)]
        if base not in terms.column_names:
            continue
        floating = pc.fill_null(
            pc.is_in(terms.column(base + "_datatype"), pa.array(_FLOATING)), False
        )
        text = pc.if_else(floating, terms.column(name), terms.column(base))
        terms = terms.set_column(terms.column_names.index(base), base, text)
        terms = terms.drop_columns([name + suffix for suffix in TERM_SUFFIXES])
    return terms


def _tsv_pieces(chunks: Iterator[bytes], where: str) -> Iterator[pa.Table]:
    """Parse a streamed TSV results document piece by piece, cutting at line ends."""
    header: bytes | None = None
    pending = bytearray()
    for chunk in chunks:
        pending += chunk
        if header is None:
            end = pending.find(b"\n")
            if end < 0:
                continue
            header = bytes(pending[: end + 1])
            del pending[: end + 1]
        if len(pending) >= PIECE_BYTES:
            cut = pending.rfind(b"\n")
            if cut >= 0:
                yield read_tsv_results(header + pending[: cut + 1], where=where)
                del pending[: cut + 1]
    if header is None:
        if not pending.strip():
            raise MalformedResponseError(
                "the endpoint sent an empty document",
                source=where,
                hint="check that query_url is the SPARQL query endpoint",
            )
        header, pending = bytes(pending), bytearray()
    yield read_tsv_results(header + pending, where=where)
