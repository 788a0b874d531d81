"""Process plumbing shared by the test servers: ports, start, wait, stop, logs."""

from __future__ import annotations

import atexit
import contextlib
import os
import shutil
import socket
import subprocess
import tempfile
import time
from pathlib import Path
from types import TracebackType
from typing import ClassVar, Self

from servers._errors import ServerError, ServerUnavailableError

HOST = "127.0.0.1"
_LOG_TAIL_CHARS = 6000
#: a server that failed to start holds no data worth a graceful stop
_FAILED_STOP_SECONDS = 2.0
#: how the servers word "the port is taken" (Oxigraph, Fuseki/Jetty; Gremlin Server; Virtuoso)
_PORT_CLASH_MARKERS = ("address already in use", "could not bind to", "failed http listen")


def free_port() -> int:
    """A TCP port on 127.0.0.1 that was free a moment ago (the OS picks it)."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as sock:
        sock.bind((HOST, 0))
        return int(sock.getsockname()[1])


def port_accepts(port: int, *, host: str = HOST, timeout: float = 0.5) -> bool:
    """Whether something accepts TCP connections on host:port."""
    with contextlib.suppress(OSError), socket.create_connection((host, port), timeout=timeout):
        return True
    return False


def log_tail(path: Path, chars: int = _LOG_TAIL_CHARS) -> str:
    """The last ``chars`` characters of a log file ('' when it does not exist)."""
    try:
        text = path.read_text(errors="replace")
    except OSError:
        return ""
    return text[-chars:]


class ManagedServer:
    """A server process on 127.0.0.1 with a run folder, a log file and a bounded start.

    Subclasses implement ``_prepare`` (write config, return the command line) and ``_ready``
    (one probe: does the server answer a real query?). ``start`` waits until ``_ready`` holds,
    ``stop`` terminates the process and kills it if it lingers; both are idempotent, and
    every running server is stopped at interpreter exit.
    """

    kind: ClassVar[str] = "server"
    #: log lines that mean the start has failed even though the process lives on
    fatal_log_markers: ClassVar[tuple[str, ...]] = ()
    #: the log line (``{port}`` filled in) by which the server says it has bound its port;
    #: probes wait for it, so a stranger holding the port is never mistaken for the server
    listening_log_marker: ClassVar[str | None] = None
    _running: ClassVar[set[ManagedServer]] = set()

    def __init__(self, *, port: int | None = None, startup_timeout: float = 120.0) -> None:
        self.host = HOST
        self.port = port or 0
        self._fixed_port = port is not None
        self.startup_timeout = startup_timeout
        self.startup_seconds: float | None = None
        self.run_dir: Path | None = None
        self._process: subprocess.Popen[bytes] | None = None

    # -- to implement -------------------------------------------------------------------
    def _prepare(self, run_dir: Path) -> list[str]:
        raise NotImplementedError

    def _env(self) -> dict[str, str]:
        return dict(os.environ)

    def _ready(self) -> bool:
        raise NotImplementedError

    @property
    def url(self) -> str:
        """Where a client connects."""
        raise NotImplementedError

    # -- life cycle ---------------------------------------------------------------------
    @property
    def log_path(self) -> Path:
        if self.run_dir is None:
            raise ServerError(f"{self.kind} server has not been started")
        return self.run_dir / f"{self.kind}.log"

    @property
    def running(self) -> bool:
        return self._process is not None and self._process.poll() is None

    def start(self) -> Self:
        """Start the process and wait until it answers; returns self.

        Raises ServerUnavailableError for a missing prerequisite and ServerError (with the
        log's tail) when the process dies or does not answer within ``startup_timeout``.
        A port clash on a port chosen here is retried with a fresh port.
        """
        if self.running:
            return self
        began = time.monotonic()
        for attempt in range(3):
            if not self._fixed_port:
                self.port = free_port()
            try:
                self._launch()
                self._wait_until_ready(began)
            except ServerUnavailableError:
                self.stop()  # nothing ran; nothing worth keeping
                raise
            except ServerError as error:
                clash = any(marker in str(error).lower() for marker in _PORT_CLASH_MARKERS)
                if clash and not self._fixed_port and attempt < 2:
                    continue
                raise
            self.startup_seconds = time.monotonic() - began
            return self
        raise AssertionError("unreachable")

    def _launch(self) -> None:
        self._stop_process()
        if self.run_dir is None:
            self.run_dir = Path(tempfile.mkdtemp(prefix=f"graphmill-{self.kind}-"))
        command = self._prepare(self.run_dir)
        with open(self.log_path, "wb") as log:  # a fresh log per try: markers are per try
            self._process = subprocess.Popen(
                command,
                stdin=subprocess.DEVNULL,
                stdout=log,
                stderr=subprocess.STDOUT,
                cwd=self.run_dir,
                env=self._env(),
                start_new_session=True,
            )
        ManagedServer._running.add(self)

    def _wait_until_ready(self, began: float) -> None:
        deadline = began + self.startup_timeout
        while True:
            assert self._process is not None
            if self._process.poll() is not None:
                code = self._process.returncode
                self._stop_process(timeout=_FAILED_STOP_SECONDS)
                raise self._failure(f"exited with status {code} while starting")
            fatal = self._fatal_log_line()
            if fatal is not None:
                self._stop_process(timeout=_FAILED_STOP_SECONDS)
                raise self._failure(f"failed to start ({fatal.strip()})")
            if self._listening() and port_accepts(self.port) and self._probe():
                return
            if time.monotonic() > deadline:
                self._stop_process(timeout=_FAILED_STOP_SECONDS)
                raise self._failure(f"did not answer within {self.startup_timeout:.0f} s")
            time.sleep(0.2)

    def _listening(self) -> bool:
        if self.listening_log_marker is None:
            return True
        marker = self.listening_log_marker.format(port=self.port)
        return marker in log_tail(self.log_path, chars=1 << 20)

    def _fatal_log_line(self) -> str | None:
        if not self.fatal_log_markers:
            return None
        for line in log_tail(self.log_path, chars=1 << 20).splitlines():
            if any(marker in line for marker in self.fatal_log_markers):
                return line
        return None

    def _probe(self) -> bool:
        try:
            return self._ready()
        except ServerError:  # the probe saw a failure that waiting will not cure
            raise
        except Exception:  # any other failure of a probe just means "not yet"
            return False

    def _failure(self, what: str) -> ServerError:
        return ServerError(
            f"{self.kind} server on {self.host}:{self.port} {what}; log {self.log_path}:\n"
            f"{log_tail(self.log_path)}"
        )

    def stop(self, *, timeout: float = 20.0, keep_run_dir: bool = False) -> None:
        """Terminate the process (SIGTERM, SIGKILL after ``timeout`` s); remove the run folder."""
        self._stop_process(timeout=timeout)
        if self.run_dir is not None and not keep_run_dir:
            shutil.rmtree(self.run_dir, ignore_errors=True)
            self.run_dir = None

    def _stop_process(self, *, timeout: float = 20.0) -> None:
        process, self._process = self._process, None
        ManagedServer._running.discard(self)
        if process is None or process.poll() is not None:
            return
        process.terminate()
        try:
            process.wait(timeout=timeout)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait(timeout=10)

    def __enter__(self) -> Self:
        return self.start()

    def __exit__(
        self,
        exc_type: type[BaseException] | None,
        exc: BaseException | None,
        tb: TracebackType | None,
    ) -> None:
        self.stop()

    def __repr__(self) -> str:
        state = "running" if self.running else "stopped"
        return f"<{type(self).__name__} {self.host}:{self.port} {state}>"


@atexit.register
def _stop_all() -> None:
    for server in list(ManagedServer._running):
        with contextlib.suppress(Exception):
            server.stop()
