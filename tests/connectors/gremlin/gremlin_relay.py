"""A TCP relay on 127.0.0.1 that forwards to a server and can drop links on purpose.

``cut_after(n, times)``: the next ``times`` connections are dropped once ``n`` bytes have
come back from the server on them. ``block_after(n)``: once ``n`` more bytes have come back
in total, every link is dropped and new ones are refused until ``heal()``.
"""

from __future__ import annotations

import contextlib
import socket
import threading
from types import TracebackType


class Relay:
    def __init__(self, target_port: int, target_host: str = "127.0.0.1") -> None:
        self.target = (target_host, target_port)
        self._listener = socket.create_server(("127.0.0.1", 0))
        self.port = int(self._listener.getsockname()[1])
        self._lock = threading.Lock()
        self._cuts: list[int] = []  # byte budgets of the next connections to be cut
        self._block_budget: int | None = None
        self._blocked = False
        self._links: list[tuple[socket.socket, socket.socket]] = []
        self.connections = 0
        self.dropped = 0
        self._closed = False
        self._thread = threading.Thread(target=self._accept, daemon=True)
        self._thread.start()

    @property
    def url(self) -> str:
        return f"ws://127.0.0.1:{self.port}/gremlin"

    # -- control -------------------------------------------------------------------
    def cut_after(self, nbytes: int, times: int = 1) -> None:
        with self._lock:
            self._cuts = [nbytes] * times

    def block_after(self, nbytes: int) -> None:
        with self._lock:
            self._block_budget = nbytes

    def heal(self) -> None:
        with self._lock:
            self._cuts, self._block_budget, self._blocked = [], None, False

    # -- plumbing ------------------------------------------------------------------
    def _accept(self) -> None:
        while not self._closed:
            try:
                client, _ = self._listener.accept()
            except OSError:
                return
            with self._lock:
                blocked = self._blocked
                budget = self._cuts.pop(0) if self._cuts else None
                self.connections += 1
            if blocked:
                _drop(client)
                continue
            try:
                upstream = socket.create_connection(self.target)
            except OSError:
                _drop(client)
                continue
            with self._lock:
                self._links.append((client, upstream))
            for args in ((client, upstream, False, None), (upstream, client, True, budget)):
                threading.Thread(target=self._pump, args=args, daemon=True).start()

    def _pump(
        self, src: socket.socket, dst: socket.socket, downstream: bool, budget: int | None
    ) -> None:
        """Copy src to dst; the server-to-client pump counts bytes against the budgets."""
        sent = 0
        try:
            while chunk := src.recv(16384):
                if downstream:
                    if budget is not None and sent + len(chunk) >= budget:
                        self._drop_link(src, dst)
                        return
                    if self._spend(len(chunk)):
                        self._block_all()
                        return
                dst.sendall(chunk)
                sent += len(chunk)
        except OSError:
            pass
        self._drop_link(src, dst)

    def _spend(self, n: int) -> bool:
        with self._lock:
            if self._block_budget is None:
                return False
            self._block_budget -= n
            if self._block_budget > 0:
                return False
            self._block_budget, self._blocked = None, True
            return True

    def _block_all(self) -> None:
        with self._lock:
            links, self._links = self._links, []
        for a, b in links:
            self._drop_link(a, b)

    def _drop_link(self, a: socket.socket, b: socket.socket) -> None:
        counted = False
        for sock in (a, b):
            if sock.fileno() != -1:
                counted = True
            _drop(sock)
        if counted:
            with self._lock:
                self.dropped += 1

    def close(self) -> None:
        self._closed = True
        _drop(self._listener)
        self._block_all()

    def __enter__(self) -> Relay:
        return self

    def __exit__(
        self, kind: type[BaseException] | None, exc: BaseException | None, tb: TracebackType | None
    ) -> None:
        self.close()


def _drop(sock: socket.socket) -> None:
    with contextlib.suppress(OSError):
        sock.shutdown(socket.SHUT_RDWR)
    with contextlib.suppress(OSError):
        sock.close()
