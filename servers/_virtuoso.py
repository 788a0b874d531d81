"""Virtuoso Open Source 7 (Debian's ``virtuoso-opensource``) as a managed SPARQL test server.

The server runs ``virtuoso-t -f -c virtuoso.ini`` on a database in its run folder, with its
HTTP port (SPARQL at ``/sparql``) and its SQL port both on 127.0.0.1. The ini keeps the
server's default result cap, ``ResultSetMaxRows = 10000``: every SELECT answer is cut to that
many rows without an error (the answer then carries ``X-SPARQL-MaxRows``), which is what the
SPARQL source must detect. Data are loaded with the bulk loader (``ld_add`` +
``rdf_loader_run`` through ``isql-vt``) before the server is handed out, or later over the
Graph Store Protocol (``/sparql-graph-crud-auth``, HTTP digest authentication as ``dba``).
The ``dba`` password is replaced at start by a generated one, passed to ``isql-vt`` on its
standard input only, never on a command line or in a file.
"""

from __future__ import annotations

import os
import re
import secrets
import shutil
import subprocess
import time
from collections.abc import Iterable
from pathlib import Path
from typing import Self

from servers._base import free_port
from servers._errors import ServerError, ServerUnavailableError
from servers._rdf import N_QUADS, N_TRIPLES, SparqlServer

#: the graph that triples loaded without a graph name go to (Virtuoso's queries without
#: FROM see the union of all graphs, so they see this one)
DEFAULT_GRAPH = "urn:graphmill:default-graph"
#: ResultSetMaxRows in Debian's virtuoso.ini: the cap the tests exercise
DEFAULT_RESULT_CAP = 10_000
_FRESH_PASSWORD = "dba"  # what a new database's dba account starts with
_INSTALL_HINT = "apt-get install virtuoso-opensource"
_ISQL_QUIET = ("VERBOSE=OFF", "BANNER=OFF", "PROMPT=OFF", "ECHO=OFF", "ERRORS=stdout")
_UNSAFE_PATH_CHARS = ("'", "\\", ",", "\n", "\r")
_INI = """\
[Database]
DatabaseFile = db/virtuoso.db
ErrorLogFile = db/virtuoso.log
LockFile = db/virtuoso.lck
TransactionFile = db/virtuoso.trx
xa_persistent_file = db/virtuoso.pxa
ErrorLogLevel = 7
FileExtend = 200
Striping = 0
TempStorage = TempDatabase

[TempDatabase]
DatabaseFile = db/virtuoso-temp.db
TransactionFile = db/virtuoso-temp.trx
Striping = 0

[Parameters]
ServerPort = {host}:{sql_port}
DisableUnixSocket = 1
CaseMode = 2
DirsAllowed = {dirs}
NumberOfBuffers = 10000
MaxDirtyBuffers = 6000
CheckpointInterval = 0
AllowOSCalls = 0

[HTTPServer]
ServerPort = {host}:{http_port}
ServerRoot = www
ServerThreads = 4
MaxClientConnections = 8

[SPARQL]
ResultSetMaxRows = {result_cap}
MaxQueryCostEstimationTime = 400
MaxQueryExecutionTime = 60
"""


def _sql_string(text: str) -> str:
    return "'" + text.replace("'", "''") + "'"


class VirtuosoServer(SparqlServer):
    """Virtuoso 7 with an empty database in the run folder and its default result cap.

    ``preload`` files (N-Triples, Turtle, N-Quads: the bulk loader goes by the extension) are
    loaded before ``start`` returns; triples go to ``DEFAULT_GRAPH``. ``result_cap`` is
    written as ``ResultSetMaxRows``. ``url`` is the server root, ``query_url`` ``/sparql``
    (open to anyone, read-only); ``password`` is ``dba``'s (generated unless given).
    """

    kind = "virtuoso"
    listening_log_marker = "HTTP server online at 127.0.0.1:{port}"

    def __init__(
        self,
        *,
        port: int | None = None,
        preload: Iterable[str | os.PathLike[str]] = (),
        result_cap: int = DEFAULT_RESULT_CAP,
        password: str | None = None,
        startup_timeout: float = 90.0,
    ) -> None:
        super().__init__(port=port, startup_timeout=startup_timeout)
        self.preload = [Path(path).resolve() for path in preload]
        self.result_cap = result_cap
        self.sql_port = 0
        # a bare word to isql (no quoting there): letters and digits, starting with a letter
        self._password = password or "gm" + secrets.token_hex(16)
        if not re.fullmatch(r"[A-Za-z][A-Za-z0-9]{7,}", self._password):
            raise ServerError("the virtuoso password must be 8+ letters and digits, a letter first")
        for path in self.preload:
            if any(c in str(path) for c in _UNSAFE_PATH_CHARS):
                raise ServerError(f"cannot bulk-load {path}: rename it without ' \\ , or newlines")

    @property
    def url(self) -> str:
        return f"http://{self.host}:{self.port}"

    @property
    def query_url(self) -> str:
        return f"{self.url}/sparql"

    @property
    def update_url(self) -> str:
        """SPARQL Update needs digest authentication as ``dba`` here (``/sparql-auth``)."""
        return f"{self.url}/sparql-auth"

    @property
    def password(self) -> str:
        """The ``dba`` password (HTTP digest auth for ``update_url`` and the graph store)."""
        return self._password

    def _store_url(self) -> str:
        return f"{self.url}/sparql-graph-crud-auth"

    def _prepare(self, run_dir: Path) -> list[str]:
        binary = shutil.which("virtuoso-t")
        if binary is None:
            raise ServerUnavailableError(f"no virtuoso-t binary ({_INSTALL_HINT})")
        if shutil.which("isql-vt") is None:
            raise ServerUnavailableError(f"no isql-vt binary ({_INSTALL_HINT})")
        self.sql_port = free_port()
        while self.sql_port == self.port:
            self.sql_port = free_port()
        db = run_dir / "db"
        shutil.rmtree(db, ignore_errors=True)  # a retried start begins from a fresh database
        db.mkdir()
        (run_dir / "www").mkdir(exist_ok=True)
        dirs = [".", str(run_dir), *sorted({str(path.parent) for path in self.preload})]
        ini = run_dir / "virtuoso.ini"
        ini.write_text(
            _INI.format(
                host=self.host,
                sql_port=self.sql_port,
                http_port=self.port,
                dirs=", ".join(dirs),
                result_cap=self.result_cap,
            )
        )
        return [binary, "-f", "-c", str(ini)]

    def start(self) -> Self:
        """Start, bulk-load ``preload`` and replace the ``dba`` password; returns self."""
        if self.running:
            return self
        began = time.monotonic()
        super().start()
        try:
            self._initialise()
        except BaseException:
            self.stop()
            raise
        self.startup_seconds = time.monotonic() - began
        return self

    def _initialise(self) -> None:
        """Bulk-load ``preload`` and set the generated ``dba`` password, in one ``isql-vt``
        session logged in with the well-known initial password (the only one that ever
        appears on a command line); the statements go on stdin."""
        lines = [
            f"ld_add({_sql_string(str(p))}, {_sql_string(DEFAULT_GRAPH)});" for p in self.preload
        ]
        if self.preload:
            lines += [
                "rdf_loader_run();",
                "checkpoint;",
                "select 'LOAD-ERROR ' || ll_file || ': ' || ll_error"
                " from DB.DBA.LOAD_LIST where ll_error is not null;",
            ]
        lines += [f"set password {_FRESH_PASSWORD} {self._password};", "exit;", ""]
        done = subprocess.run(
            ["isql-vt", f"{self.host}:{self.sql_port}", "dba", _FRESH_PASSWORD, *_ISQL_QUIET],
            input="\n".join(lines),
            capture_output=True,
            text=True,
            timeout=600,
            check=False,
        )
        output = done.stdout + done.stderr
        errors = [line for line in output.splitlines() if line.startswith("*** Error")]
        errors += [line for line in output.splitlines() if line.startswith("LOAD-ERROR ")]
        if errors or done.returncode != 0:
            detail = "; ".join(errors) or output[-1000:]
            raise ServerError(f"virtuoso set-up failed ({done.returncode}): {detail[:2000]}")

    def load(
        self, data: bytes | str, *, content_type: str = N_TRIPLES, graph: str | None = None
    ) -> None:
        """Add triples over Virtuoso's Graph Store Protocol endpoint (digest auth as ``dba``);
        they go to ``graph`` or ``DEFAULT_GRAPH``. N-Quads are refused here: preload them."""
        import httpx

        if content_type == N_QUADS:
            raise ServerError("virtuoso's graph store takes triples; preload N-Quads files")
        body = data.encode() if isinstance(data, str) else data
        response = httpx.post(
            self._store_url(),
            params={"graph-uri": graph or DEFAULT_GRAPH},
            content=body,
            headers={"Content-Type": content_type},
            auth=httpx.DigestAuth("dba", self._password),
            timeout=300.0,
        )
        if response.status_code >= 300:
            raise ServerError(
                f"virtuoso refused the load: {response.status_code} {response.text[:500]}"
            )
