"""SPARQL servers as managed test servers: Apache Jena Fuseki 5.6 and Oxigraph."""

from __future__ import annotations

import os
import subprocess
from collections.abc import Iterable
from pathlib import Path

from servers._base import ManagedServer
from servers._errors import ServerError, ServerUnavailableError
from servers._jars import (
    QUICK_START_JAVA_OPTIONS,
    ensure_jars,
    executable_beside_python,
    find_java,
)

FUSEKI_MAIN_CLASS = "org.apache.jena.fuseki.main.cmds.FusekiMainCmd"
N_TRIPLES = "application/n-triples"
N_QUADS = "application/n-quads"
_ASK_HEADERS = {"Accept": "application/sparql-results+json"}


class SparqlServer(ManagedServer):
    """What both SPARQL servers offer: ``query_url``, ``update_url``, ``load`` and ``ask``."""

    @property
    def query_url(self) -> str:
        """The SPARQL 1.1 query endpoint (GET ``?query=`` or POST)."""
        return f"{self.url}/query"

    @property
    def update_url(self) -> str:
        """The SPARQL 1.1 update endpoint (POST)."""
        return f"{self.url}/update"

    @property
    def auth(self) -> tuple[str, str] | None:
        """HTTP basic credentials a client needs (None when the server is open)."""
        return None

    def _store_url(self) -> str:
        raise NotImplementedError

    def load(
        self, data: bytes | str, *, content_type: str = N_TRIPLES, graph: str | None = None
    ) -> None:
        """Add RDF to the store over the Graph Store Protocol (HTTP POST).

        N-Triples go to the default graph unless ``graph`` names one; N-Quads
        (``content_type=N_QUADS``) go to the dataset. Raises ServerError on a refusal.
        """
        import httpx

        params: dict[str, str] = {}
        if content_type != N_QUADS:
            params = {"graph": graph} if graph else {"default": ""}
        body = data.encode() if isinstance(data, str) else data
        response = httpx.post(
            self._store_url(),
            params=params,
            content=body,
            headers={"Content-Type": content_type},
            auth=self.auth,
            timeout=120.0,
        )
        if response.status_code >= 300:
            raise ServerError(
                f"{self.kind} refused the load: {response.status_code} {response.text[:500]}"
            )

    def ask(self, query: str = "ASK {}", *, timeout: float = 30.0) -> bool:
        """Run a SPARQL ASK and return its answer."""
        import httpx

        response = httpx.post(
            self.query_url,
            data={"query": query},
            headers=_ASK_HEADERS,
            auth=self.auth,
            timeout=timeout,
        )
        response.raise_for_status()
        return bool(response.json()["boolean"])

    def _ready(self) -> bool:
        return self.ask("ASK {}", timeout=5.0) in (True, False)


class FusekiServer(SparqlServer):
    """Fuseki (main) with one in-memory, updatable dataset at ``/ds``.

    ``auth=(user, password)`` requires HTTP basic authentication on every request
    (``--passwd FILE --auth=basic``). ``url`` is the dataset; ``query_url``, ``update_url``
    and ``gsp_url`` are its SPARQL query, update and Graph Store endpoints.
    """

    kind = "fuseki"
    listening_log_marker = "Start Fuseki (http={port})"

    def __init__(
        self,
        auth: tuple[str, str] | None = None,
        *,
        port: int | None = None,
        dataset: str = "ds",
        java_options: tuple[str, ...] = QUICK_START_JAVA_OPTIONS,
        startup_timeout: float = 120.0,
    ) -> None:
        super().__init__(port=port, startup_timeout=startup_timeout)
        self._auth = auth
        self.dataset = dataset.strip("/")
        self.java_options = java_options

    @property
    def auth(self) -> tuple[str, str] | None:
        return self._auth

    @property
    def url(self) -> str:
        return f"http://{self.host}:{self.port}/{self.dataset}"

    @property
    def gsp_url(self) -> str:
        return f"{self.url}/data"

    def _store_url(self) -> str:
        return self.gsp_url

    def _prepare(self, run_dir: Path) -> list[str]:
        lib = ensure_jars("fuseki")
        command = [
            find_java(),
            *self.java_options,
            "-cp",
            f"{lib}/*",
            FUSEKI_MAIN_CLASS,
            "--localhost",
            "--port",
            str(self.port),
            "--mem",
            "--update",
        ]
        if self._auth is not None:
            user, password = self._auth
            if not user or any(c in user + password for c in ":,\n\r"):
                raise ValueError(
                    "Fuseki user and password must be non-empty, without : , or newlines"
                )
            passwd = run_dir / "passwd"
            passwd.touch(mode=0o600)
            passwd.write_text(f"{user}: {password}\n")  # Jetty realm file format
            command += ["--passwd", str(passwd), "--auth=basic"]
        return [*command, f"/{self.dataset}"]


class OxigraphServer(SparqlServer):
    """Oxigraph's server (the ``oxigraph`` PyPI package's binary) on a store in the run folder.

    ``preload`` files are bulk-loaded with ``oxigraph load`` before the server starts; more
    data can follow over HTTP with ``load``. ``url`` is the server root.
    """

    kind = "oxigraph"
    listening_log_marker = "Listening for requests at http://127.0.0.1:{port}"

    def __init__(
        self,
        *,
        port: int | None = None,
        preload: Iterable[str | os.PathLike[str]] = (),
        startup_timeout: float = 60.0,
    ) -> None:
        super().__init__(port=port, startup_timeout=startup_timeout)
        self.preload = [Path(path) for path in preload]

    @property
    def url(self) -> str:
        return f"http://{self.host}:{self.port}"

    @property
    def store_url(self) -> str:
        return f"{self.url}/store"

    def _store_url(self) -> str:
        return self.store_url

    def _prepare(self, run_dir: Path) -> list[str]:
        binary = executable_beside_python("oxigraph")
        if binary is None:
            raise ServerUnavailableError("no oxigraph binary (pip install oxigraph)")
        store = run_dir / "store"
        if self.preload and not store.exists():
            files = [str(path.resolve()) for path in self.preload]
            done = subprocess.run(
                [binary, "load", "--location", str(store), "--file", *files],
                capture_output=True,
                text=True,
                check=False,
            )
            if done.returncode != 0:
                raise ServerError(
                    f"oxigraph load failed ({done.returncode}): {done.stderr[-4000:]}"
                )
        return [binary, "serve", "--location", str(store), "--bind", f"{self.host}:{self.port}"]
