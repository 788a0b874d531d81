"""Misbehaving network parts for fault tests, all on 127.0.0.1, each in a daemon thread.

* :class:`FaultyEndpoint` -- a tiny ``http.server`` that answers ``ASK`` properly and every
  SELECT with a chosen fault (HTTP 503, 401, a document that is not TSV, a row with too many
  cells, a wrong content type, or silence past the client's timeout);
* :class:`CuttingRelay` -- a TCP relay in front of a real server that cuts the connection
  after a number of response bytes, for the first few connections;
* :class:`CappingProxy` -- an HTTP proxy in front of a real server that cuts every TSV
  result to ``cap`` rows without saying so, as a server with a result cap does.
"""

from __future__ import annotations

import contextlib
import json
import socket
import threading
import time
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from typing import Any, ClassVar
from urllib.parse import parse_qs, urlsplit

import httpx


class _QuietHandler(BaseHTTPRequestHandler):
    """Serves GET and POST alike through ``_serve``, and logs nothing."""

    def log_message(self, *args: object) -> None:
        return None

    def do_GET(self) -> None:
        self._serve()

    def do_POST(self) -> None:
        self._serve()

    def _serve(self) -> None:
        raise NotImplementedError


HOST = "127.0.0.1"
ASK_TRUE = b'{"head": {}, "boolean": true}'


def _query_of(handler: BaseHTTPRequestHandler) -> str:
    params = parse_qs(urlsplit(handler.path).query)
    if "query" in params:
        return params["query"][0]
    length = int(handler.headers.get("Content-Length") or 0)
    body = handler.rfile.read(length).decode("utf-8")
    if handler.headers.get("Content-Type", "").startswith("application/x-www-form-urlencoded"):
        return parse_qs(body)["query"][0]
    return body


class _Server:
    def __init__(self, handler: type[BaseHTTPRequestHandler]) -> None:
        self.httpd = ThreadingHTTPServer((HOST, 0), handler)
        self.httpd.daemon_threads = True
        self.httpd.handle_error = lambda *args: None  # type: ignore[method-assign]  # a client gone
        self.port = int(self.httpd.server_address[1])
        self.thread = threading.Thread(target=self.httpd.serve_forever, daemon=True)

    def __enter__(self) -> Any:
        self.thread.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self.httpd.shutdown()
        self.httpd.server_close()


class FaultyEndpoint(_Server):
    """``fault`` is one of: 503, 401, not-tsv, extra-cell, html, slow."""

    FAULTS: ClassVar[tuple[str, ...]] = ("503", "401", "not-tsv", "extra-cell", "html", "slow")

    def __init__(self, fault: str) -> None:
        assert fault in self.FAULTS
        self.fault = fault
        self.selects = 0
        outer = self

        class Handler(_QuietHandler):
            def _answer(self, status: int, content_type: str, body: bytes) -> None:
                self.send_response(status)
                self.send_header("Content-Type", content_type)
                self.send_header("Content-Length", str(len(body)))
                if status == 401:
                    self.send_header("WWW-Authenticate", 'Basic realm="test"')
                self.end_headers()
                self.wfile.write(body)

            def _serve(self) -> None:
                query = _query_of(self)
                if query.lstrip().upper().startswith("ASK"):
                    self._answer(200, "application/sparql-results+json", ASK_TRUE)
                    return
                outer.selects += 1
                tsv = "text/tab-separated-values; charset=utf-8"
                if outer.fault == "503":
                    self._answer(503, "text/plain", b"overloaded, come back later")
                elif outer.fault == "401":
                    self._answer(401, "text/plain", b"who are you?")
                elif outer.fault == "not-tsv":
                    self._answer(200, tsv, b"this is not\ta results table\n")
                elif outer.fault == "extra-cell":
                    body = b"?vertex\n<http://e.test/a>\n<http://e.test/b>\t<http://e.test/c>\n"
                    self._answer(200, tsv, body)
                elif outer.fault == "html":
                    self._answer(200, "text/html", b"<html><body>Log in first</body></html>")
                else:  # slow
                    time.sleep(3)
                    self._answer(200, tsv, b"?vertex\n")

        super().__init__(Handler)

    @property
    def url(self) -> str:
        return f"http://{HOST}:{self.port}/sparql"


class CappingProxy(_Server):
    """Forwards queries to ``target`` (a query URL) and keeps at most ``cap`` result rows."""

    def __init__(self, target: str, cap: int) -> None:
        self.cap = cap
        self.cut_results = 0
        outer = self

        class Handler(_QuietHandler):
            def _serve(self) -> None:
                query = _query_of(self)
                accept = self.headers.get("Accept", "text/tab-separated-values")
                reply = httpx.post(
                    target,
                    content=query.encode(),
                    headers={"Content-Type": "application/sparql-query", "Accept": accept},
                    timeout=120,
                )
                body = reply.content
                if reply.headers.get("content-type", "").startswith("text/tab-separated"):
                    lines = body.split(b"\n")
                    rows = [line for line in lines[1:] if line]
                    if len(rows) > outer.cap:
                        outer.cut_results += 1
                        body = b"\n".join([lines[0], *rows[: outer.cap]]) + b"\n"
                self.send_response(reply.status_code)
                self.send_header("Content-Type", reply.headers.get("content-type", "text/plain"))
                self.send_header("Content-Length", str(len(body)))
                self.end_headers()
                self.wfile.write(body)

        super().__init__(Handler)

    @property
    def url(self) -> str:
        return f"http://{HOST}:{self.port}/query"


class CuttingRelay:
    """A TCP relay to ``target_port``: the first ``cuts`` connections that carry more than
    ``after_bytes`` response bytes are closed at that point; later ones pass through.
    ``refuse()`` makes it drop every new connection at once (a server gone away)."""

    def __init__(self, target_port: int, *, after_bytes: int, cuts: int = 1) -> None:
        self.target_port = target_port
        self.after_bytes = after_bytes
        self.cuts_left = cuts
        self.cuts_done = 0
        self.refusing = False
        self._lock = threading.Lock()
        self.listener = socket.create_server((HOST, 0))
        self.port = int(self.listener.getsockname()[1])
        self._stop = threading.Event()
        self.thread = threading.Thread(target=self._accept, daemon=True)

    def __enter__(self) -> CuttingRelay:
        self.thread.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self._stop.set()
        with contextlib.suppress(OSError):
            self.listener.close()

    def refuse(self, refusing: bool = True) -> None:
        self.refusing = refusing

    def _accept(self) -> None:
        while not self._stop.is_set():
            try:
                client, _ = self.listener.accept()
            except OSError:
                return
            if self.refusing:
                client.close()
                continue
            threading.Thread(target=self._serve, args=(client,), daemon=True).start()

    def _serve(self, client: socket.socket) -> None:
        try:
            upstream = socket.create_connection((HOST, self.target_port))
        except OSError:
            client.close()
            return
        with self._lock:
            cut = self.cuts_left > 0
        threading.Thread(target=self._pump, args=(client, upstream, None), daemon=True).start()
        self._pump(upstream, client, self.after_bytes if cut else None)

    def _pump(self, source: socket.socket, sink: socket.socket, limit: int | None) -> None:
        sent = 0
        try:
            while data := source.recv(65536):
                if limit is not None and sent + len(data) > limit:
                    with self._lock:
                        armed = self.cuts_left > 0
                        if armed:
                            self.cuts_left -= 1
                            self.cuts_done += 1
                    if armed:
                        sink.sendall(data[: limit - sent])
                        break
                    limit = None
                sink.sendall(data)
                sent += len(data)
        except OSError:
            pass
        finally:
            for sock in (source, sink):
                with contextlib.suppress(OSError):
                    sock.shutdown(socket.SHUT_RDWR)
                with contextlib.suppress(OSError):
                    sock.close()


class RecordingEndpoint(_Server):
    """Answers every SELECT with an empty result (TSV, or JSON if asked) and
    records each request as (method, content type, Accept, query). With ``refuse_direct_post``
    it answers 415 to ``application/sparql-query`` bodies; with ``tls`` = (cert, key) it
    speaks HTTPS."""

    def __init__(self, *, refuse_direct_post: bool = False, tls: tuple[str, str] | None = None):
        self.requests: list[tuple[str, str, str, str]] = []
        self.scheme = "https" if tls else "http"
        outer = self

        class Handler(_QuietHandler):
            def _serve(self) -> None:
                content_type = self.headers.get("Content-Type", "")
                query = _query_of(self)
                outer.requests.append(
                    (self.command, content_type, self.headers.get("Accept", ""), query)
                )
                if refuse_direct_post and content_type.startswith("application/sparql-query"):
                    body, status, kind = b"use a form", 415, "text/plain"
                elif query.lstrip().upper().startswith("ASK"):
                    body, status, kind = ASK_TRUE, 200, "application/sparql-results+json"
                else:
                    head = query.split("WHERE", 1)[0].split()
                    names = [w for w in head if w.startswith("?")]
                    body, status, kind = ("\t".join(names) + "\n").encode(), 200, TSV_TYPE
                    if "json" in self.headers.get("Accept", ""):
                        doc = {
                            "head": {"vars": [n[1:] for n in names]},
                            "results": {"bindings": []},
                        }
                        body, kind = json.dumps(doc).encode(), "application/sparql-results+json"
                self.send_response(status)
                self.send_header("Content-Type", kind)
                self.send_header("Content-Length", str(len(body)))
                self.end_headers()
                self.wfile.write(body)

        super().__init__(Handler)
        if tls:
            import ssl

            context = ssl.SSLContext(ssl.PROTOCOL_TLS_SERVER)
            context.load_cert_chain(*tls)
            self.httpd.socket = context.wrap_socket(self.httpd.socket, server_side=True)

    @property
    def url(self) -> str:
        return f"{self.scheme}://{HOST}:{self.port}/sparql"


TSV_TYPE = "text/tab-separated-values; charset=utf-8"
