"""Start, stop and fetch the real servers graphmill is tested against.

Library use (tests, benchmarks, local trials)::

    from servers.manage import GremlinServer, FusekiServer, OxigraphServer, VirtuosoServer

    with GremlinServer() as gremlin:          # g, g_modern, g_dead on ws://127.0.0.1:PORT/gremlin
        print(gremlin.submit("g_modern.V().count()"))   # [6]

Command line::

    python -m servers.manage fetch                     # the Maven jars, once (CI does this)
    python -m servers.manage start gremlin [--port N] [--secure] [--evaluation-timeout-ms MS]
    python -m servers.manage start fuseki [--port N] [--auth USER]
    python -m servers.manage start oxigraph [--port N] [--load FILE ...]
    python -m servers.manage start virtuoso [--port N] [--load FILE ...] [--result-cap ROWS]

``start`` stays in the foreground until Ctrl-C; its JVMs run with THROUGHPUT_JAVA_OPTIONS
(full JIT, as for benchmarks) rather than the quick-start options tests use.

Passwords are never printed: the secure Gremlin server, an authenticated Fuseki and Virtuoso take
theirs from ``$GRAPHMILL_SERVER_PASSWORD`` or write a generated one to a 0600 file whose
path is printed.
"""

from __future__ import annotations

import argparse
import os
import secrets
import signal
import sys
import time
from collections.abc import Sequence

from servers._base import HOST, ManagedServer, free_port
from servers._errors import ServerError, ServerUnavailableError
from servers._gremlin import TRAVERSAL_SOURCES, GremlinServer
from servers._jars import (
    JAR_KINDS,
    QUICK_START_JAVA_OPTIONS,
    THROUGHPUT_JAVA_OPTIONS,
    cache_root,
    ensure_jars,
)
from servers._rdf import N_QUADS, N_TRIPLES, FusekiServer, OxigraphServer, SparqlServer
from servers._virtuoso import DEFAULT_RESULT_CAP, VirtuosoServer

__all__ = [
    "HOST",
    "JAR_KINDS",
    "N_QUADS",
    "N_TRIPLES",
    "QUICK_START_JAVA_OPTIONS",
    "THROUGHPUT_JAVA_OPTIONS",
    "TRAVERSAL_SOURCES",
    "FusekiServer",
    "GremlinServer",
    "ManagedServer",
    "OxigraphServer",
    "ServerError",
    "ServerUnavailableError",
    "SparqlServer",
    "VirtuosoServer",
    "cache_root",
    "ensure_jars",
    "free_port",
    "main",
]

_PASSWORD_ENV = "GRAPHMILL_SERVER_PASSWORD"


def _build(args: argparse.Namespace) -> tuple[ManagedServer, str | None]:
    """The server the command line asks for, and the password it uses (None when open)."""
    password = os.environ.get(_PASSWORD_ENV) or None
    if args.kind == "gremlin":
        gremlin = GremlinServer(
            "secure" if args.secure else "plain",
            port=args.port,
            data_dir=args.data_dir,
            evaluation_timeout_ms=args.evaluation_timeout_ms,
            password=password,
            java_options=THROUGHPUT_JAVA_OPTIONS,
        )
        return gremlin, gremlin.password
    if args.kind == "fuseki":
        if args.auth is None:
            return FusekiServer(port=args.port, java_options=THROUGHPUT_JAVA_OPTIONS), None
        password = password or secrets.token_urlsafe(18)
        fuseki = FusekiServer(
            (args.auth, password), port=args.port, java_options=THROUGHPUT_JAVA_OPTIONS
        )
        return fuseki, password
    if args.kind == "virtuoso":
        virtuoso = VirtuosoServer(
            port=args.port, preload=args.load or (), result_cap=args.result_cap, password=password
        )
        return virtuoso, virtuoso.password
    return OxigraphServer(port=args.port, preload=args.load or ()), None


def _describe(server: ManagedServer, password: str | None) -> list[str]:
    lines = [f"{server.kind} server ready in {server.startup_seconds or 0:.1f} s at {server.url}"]
    if isinstance(server, GremlinServer):
        lines.append(f"traversal sources: {', '.join(TRAVERSAL_SOURCES)}")
        if server.secure:
            lines.append(f"user: {server.username}; trust the certificate {server.cert_path}")
    if isinstance(server, SparqlServer):
        lines.append(f"query: {server.query_url}   update: {server.update_url}")
        if server.auth is not None:
            lines.append(f"HTTP basic user: {server.auth[0]}")
        if isinstance(server, VirtuosoServer):
            lines.append(f"result cap: {server.result_cap} rows; update as dba (HTTP digest)")
    if password is not None and not os.environ.get(_PASSWORD_ENV):
        assert server.run_dir is not None
        secret = server.run_dir / "password.txt"
        secret.touch(mode=0o600)
        secret.write_text(password + "\n")
        lines.append(f"password: in {secret} (set ${_PASSWORD_ENV} to choose one)")
    lines.append(f"log: {server.log_path}   (Ctrl-C stops)")
    return lines


def _start(args: argparse.Namespace) -> int:
    server, password = _build(args)
    signal.signal(signal.SIGTERM, lambda *_: sys.exit(0))  # stop cleanly on kill, too
    try:
        server.start()
        print("\n".join(_describe(server, password)), flush=True)
        while server.running:
            time.sleep(0.5)
        print(f"{server.kind} server exited; see {server.log_path}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        return 0
    finally:
        server.stop()


def _fetch(_: argparse.Namespace) -> int:
    for kind in JAR_KINDS:
        lib = ensure_jars(kind)
        print(f"{kind}: {len(list(lib.glob('*.jar')))} jars in {lib}")
    return 0


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="python -m servers.manage",
        description=__doc__,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    commands = parser.add_subparsers(dest="command", required=True)
    commands.add_parser("fetch", help="fetch the Gremlin Server and Fuseki jars with Maven")
    start = commands.add_parser("start", help="start one server in the foreground")
    start.add_argument("kind", choices=["gremlin", "fuseki", "oxigraph", "virtuoso"])
    start.add_argument("--port", type=int, default=None, help="default: a free port")
    start.add_argument("--secure", action="store_true", help="gremlin: authentication and TLS")
    start.add_argument("--data-dir", default=None, help="gremlin: keep `graph` in this folder")
    start.add_argument("--evaluation-timeout-ms", type=int, default=None, help="gremlin")
    start.add_argument("--auth", metavar="USER", default=None, help="fuseki: HTTP basic user")
    start.add_argument(
        "--load", nargs="+", default=None, help="oxigraph, virtuoso: files to preload"
    )
    start.add_argument(
        "--result-cap",
        type=int,
        default=DEFAULT_RESULT_CAP,
        help="virtuoso: ResultSetMaxRows (default %(default)s, the server's own default)",
    )
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    try:
        return _start(args) if args.command == "start" else _fetch(args)
    except ServerError as error:
        print(f"error: {error}", file=sys.stderr)
        return 2


if __name__ == "__main__":
    sys.exit(main())
