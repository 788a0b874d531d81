"""Apache TinkerPop Gremlin Server 3.8 (TinkerGraph) as a managed test server."""

from __future__ import annotations

import concurrent.futures
import contextlib
import json
import logging
import os
import secrets
import shutil
import ssl
import subprocess
from collections.abc import Iterator
from pathlib import Path
from string import Template
from typing import Any, Literal

from servers._base import ManagedServer
from servers._errors import ServerError
from servers._jars import QUICK_START_JAVA_OPTIONS, SERVERS_DIR, ensure_jars, find_java

CONF_DIR = SERVERS_DIR / "gremlin"
MAIN_CLASS = "org.apache.tinkerpop.gremlin.server.GremlinServer"
#: the traversal sources the init script binds, and the graphs behind them
TRAVERSAL_SOURCES = {"g": "graph", "g_modern": "modern", "g_dead": "dead"}
#: environment variables through which the secure server's init script gets its user
_ENV_CREDENTIALS_DB = "GRAPHMILL_GREMLIN_CREDENTIALS_DB"
_ENV_USER = "GRAPHMILL_GREMLIN_USER"
_ENV_PASSWORD = "GRAPHMILL_GREMLIN_PASSWORD"
#: Gryo (shaded Kryo) reflects into JDK classes: reading grateful-dead.kryo on Java 17 fails
#: with InaccessibleObjectException (java.util.concurrent.atomic) without these
JAVA_OPENS = tuple(
    f"--add-opens=java.base/{package}=ALL-UNNAMED"
    for package in (
        "java.io",
        "java.lang",
        "java.lang.invoke",
        "java.lang.reflect",
        "java.net",
        "java.nio",
        "java.util",
        "java.util.concurrent",
        "java.util.concurrent.atomic",
        "sun.nio.ch",
    )
)


def _yaml_str(value: object) -> str:
    """A YAML double-quoted scalar (JSON strings are valid YAML)."""
    return json.dumps(str(value))


def _render(template: Path, target: Path, **values: object) -> Path:
    text = Template(template.read_text()).substitute(values)
    target.write_text(text)
    target.chmod(0o600)
    return target


class GremlinServer(ManagedServer):
    """Gremlin Server with TinkerGraph graphs ``graph`` (empty), ``modern`` and ``dead``.

    Traversal sources ``g``, ``g_modern`` and ``g_dead``; GraphBinary v1 over WebSocket at
    ``url``. ``config="secure"`` adds SASL authentication (``username``/``password``) and TLS
    with a self-signed certificate at ``cert_path`` (PEM; see ``ssl_context()``).
    ``data_dir`` makes ``graph`` persistent: it is read on start and written on a clean stop.
    ``evaluation_timeout_ms`` is the server's evaluationTimeout (status 598 when exceeded).
    """

    kind = "gremlin"
    fatal_log_markers = (
        "init script could not be evaluated",
        "Could not invoke constructor",
        "Gremlin Server was unable to start",  # e.g. the port is taken; it lingers 30 s
    )
    listening_log_marker = "Channel started at port {port}."

    def __init__(
        self,
        config: Literal["plain", "secure"] = "plain",
        *,
        data_dir: str | os.PathLike[str] | None = None,
        evaluation_timeout_ms: int | None = None,
        port: int | None = None,
        username: str = "graphmill",
        password: str | None = None,
        java_options: tuple[str, ...] = QUICK_START_JAVA_OPTIONS,
        startup_timeout: float = 120.0,
    ) -> None:
        if config not in ("plain", "secure"):
            raise ValueError(f"config must be 'plain' or 'secure', not {config!r}")
        super().__init__(port=port, startup_timeout=startup_timeout)
        self.config = config
        self.data_dir = Path(data_dir) if data_dir is not None else None
        self.evaluation_timeout_ms = evaluation_timeout_ms or 30_000
        self.java_options = java_options
        self.secure = config == "secure"
        self.username: str | None = username if self.secure else None
        self.password: str | None = (password or secrets.token_urlsafe(18)) if self.secure else None
        self.cert_path: Path | None = None

    @property
    def url(self) -> str:
        scheme = "wss" if self.secure else "ws"
        return f"{scheme}://{self.host}:{self.port}/gremlin"

    def ssl_context(self) -> ssl.SSLContext | None:
        """A client SSL context that trusts this server's certificate (None when plain)."""
        if not self.secure:
            return None
        if self.cert_path is None:
            raise ServerError("the secure Gremlin server has not been started")
        return ssl.create_default_context(cafile=str(self.cert_path))

    def client_options(self) -> dict[str, Any]:
        """Keyword arguments for ``gremlin_python.driver.client.Client(url, source, **...)``."""
        if not self.secure:
            return {}
        return {
            "username": self.username,
            "password": self.password,
            "ssl_options": self.ssl_context(),
        }

    def submit(self, script: str, *, source: str = "g", **request: Any) -> list[Any]:
        """Run a Groovy script on the server and return all its results (a worker thread
        keeps gremlinpython's own event loop clear of any loop the caller runs)."""
        from gremlin_python.driver.client import Client

        def run() -> list[Any]:
            client = Client(self.url, source, **self.client_options())
            try:
                return list(client.submit(script, **request).all().result())
            finally:
                client.close()

        with concurrent.futures.ThreadPoolExecutor(max_workers=1) as pool:
            return pool.submit(run).result()

    # -- ManagedServer ------------------------------------------------------------------
    def _prepare(self, run_dir: Path) -> list[str]:
        lib = ensure_jars("gremlin")
        java = find_java()
        graph_properties = CONF_DIR / "tinkergraph-empty.properties"
        if self.data_dir is not None:
            self.data_dir.mkdir(parents=True, exist_ok=True)
            graph_properties = _render(
                CONF_DIR / "tinkergraph-persistent.properties",
                run_dir / "graph.properties",
                graph_location=(self.data_dir / "graph.json").resolve(),
            )
        values: dict[str, object] = {
            "port": self.port,
            "evaluation_timeout_ms": int(self.evaluation_timeout_ms),
            "graph_properties": _yaml_str(graph_properties),
            "empty_properties": _yaml_str(CONF_DIR / "tinkergraph-empty.properties"),
            "init_scripts": _yaml_str(CONF_DIR / "init-graphs.groovy"),
        }
        template = CONF_DIR / "gremlin-server.yaml"
        if self.secure:
            template = CONF_DIR / "gremlin-server-secure.yaml"
            values.update(self._prepare_security(run_dir, java))
        conf = _render(template, run_dir / "gremlin-server.yaml", **values)
        return [
            java,
            *JAVA_OPENS,
            *self.java_options,
            f"-Dlogback.configurationFile={CONF_DIR / 'logback.xml'}",
            "-cp",
            f"{lib}/*",
            MAIN_CLASS,
            str(conf),
        ]

    def _prepare_security(self, run_dir: Path, java: str) -> dict[str, object]:
        keystore = run_dir / "server.p12"
        self.cert_path = run_dir / "server-cert.pem"
        self._keystore_password = secrets.token_hex(16)
        _make_self_signed(java, keystore, self.cert_path, self._keystore_password)
        (run_dir / "credentials.kryo").unlink(missing_ok=True)  # one user, even on a retry
        self._credentials_properties = _render(
            CONF_DIR / "tinkergraph-credentials.properties",
            run_dir / "credentials.properties",
            credentials_location=run_dir / "credentials.kryo",
        )
        scripts = [CONF_DIR / "init-credentials.groovy", CONF_DIR / "init-graphs.groovy"]
        return {
            "init_scripts": ", ".join(_yaml_str(path) for path in scripts),
            "credentials_properties": _yaml_str(self._credentials_properties),
            "keystore": _yaml_str(keystore),
            "keystore_password": _yaml_str(self._keystore_password),
        }

    def _env(self) -> dict[str, str]:
        env = dict(os.environ)
        if self.secure:
            assert self.username is not None and self.password is not None
            env[_ENV_CREDENTIALS_DB] = str(self._credentials_properties)
            env[_ENV_USER] = self.username
            env[_ENV_PASSWORD] = self.password
        return env

    def _ready(self) -> bool:
        # a real round trip through the script engine; g is bound by the init script, which
        # runs before the port opens: an unbound g now means the init script failed
        from gremlin_python.driver.protocol import GremlinServerError

        try:
            with _quiet_driver_log():
                return self.submit("g.V().limit(0).count()") == [0]
        except GremlinServerError as error:
            if error.status_code == 499 and "global bindings" in str(error):
                raise ServerError(f"gremlin init script did not bind g: {error}") from error
            raise


@contextlib.contextmanager
def _quiet_driver_log() -> Iterator[None]:
    """Silence gremlinpython's error log (one very long line per failed probe)."""
    log = logging.getLogger("gremlinpython")
    level = log.level
    log.setLevel(logging.CRITICAL)
    try:
        yield
    finally:
        log.setLevel(level)


def _make_self_signed(java: str, keystore: Path, cert_pem: Path, password: str) -> None:
    """A PKCS12 keystore with a fresh RSA key and certificate for 127.0.0.1/localhost, and
    the certificate as PEM. Uses openssl when present (about 0.1 s), else keytool (about
    2.5 s: two JVM starts). The password travels through the tools' environment."""
    env = dict(os.environ, GRAPHMILL_KEYSTORE_PASSWORD=password)
    keystore.unlink(missing_ok=True)  # a second start (port clash retry) makes a fresh key
    openssl = shutil.which("openssl")
    if openssl is not None:
        key = keystore.with_suffix(".key.pem")
        steps = [
            [openssl, "req", "-x509", "-newkey", "rsa:2048", "-nodes", "-days", "30",
             "-keyout", str(key), "-out", str(cert_pem),
             "-subj", "/CN=localhost/O=graphmill test server",
             "-addext", "subjectAltName=IP:127.0.0.1,DNS:localhost"],
            [openssl, "pkcs12", "-export", "-in", str(cert_pem), "-inkey", str(key),
             "-name", "gremlin", "-out", str(keystore),
             "-passout", "env:GRAPHMILL_KEYSTORE_PASSWORD"],
        ]  # fmt: skip
    else:
        beside_java = Path(java).resolve().with_name("keytool")
        keytool = str(beside_java) if beside_java.is_file() else "keytool"
        common = ["-keystore", str(keystore), "-storetype", "PKCS12",
                  "-storepass:env", "GRAPHMILL_KEYSTORE_PASSWORD", "-alias", "gremlin"]  # fmt: skip
        steps = [
            [keytool, "-genkeypair", *common, "-keypass:env", "GRAPHMILL_KEYSTORE_PASSWORD",
             "-keyalg", "RSA", "-keysize", "2048", "-validity", "30",
             "-dname", "CN=localhost, O=graphmill test server",
             "-ext", "SAN=ip:127.0.0.1,dns:localhost"],
            [keytool, "-exportcert", "-rfc", *common, "-file", str(cert_pem)],
        ]  # fmt: skip
    try:
        for command in steps:
            done = subprocess.run(command, capture_output=True, text=True, env=env, check=False)
            if done.returncode != 0:
                tool = Path(command[0]).name
                raise ServerError(f"{tool} failed ({done.returncode}): {done.stderr[-2000:]}")
    finally:
        keystore.with_suffix(".key.pem").unlink(missing_ok=True)
    keystore.chmod(0o600)
