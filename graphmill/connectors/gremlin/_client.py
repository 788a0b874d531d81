"""A pull-driven Gremlin client: one WebSocket per channel, read one frame at a time.

gremlinpython's ``Client`` reads every response frame into an unbounded queue as fast as the
server sends it. A :class:`Channel` drives the same protocol and transport classes itself and
reads at most one frame ahead of the caller (the next frame arrives while the caller turns the
last one into a page, so client and server work at the same time), so TCP flow control holds
the server back and client memory stays bounded by two frames plus the page being built.
Each channel runs its transport on a thread of its own (the transport runs an asyncio loop,
which cannot run inside a thread that already has one).

Channels raise the driver's own exceptions; :mod:`._errors` turns them into ours.
"""

from __future__ import annotations

import contextlib
import logging
import queue
import threading
import uuid
from collections.abc import Callable, Iterator
from concurrent.futures import ThreadPoolExecutor
from operator import attrgetter
from typing import Any, TypeVar

from gremlin_python.driver import serializer, useragent
from gremlin_python.driver.aiohttp.transport import AiohttpTransport
from gremlin_python.driver.protocol import GremlinServerWSProtocol
from gremlin_python.driver.request import RequestMessage
from gremlin_python.driver.resultset import ResultSet
from gremlin_python.process.traversal import Bytecode, Traverser

from graphmill.connectors.gremlin._binary import PageReader
from graphmill.connectors.gremlin._errors import call_with_retries
from graphmill.connectors.gremlin._settings import MAX_FRAME_BYTES, GremlinSettings

# The driver logs every error response with the whole request and the server's Java stack
# trace; without a handler of its own that lands on stderr. We report errors as one line.
logging.getLogger("gremlinpython").addHandler(logging.NullHandler())

_OBJECT = attrgetter("object")
_BULK = attrgetter("bulk")
T = TypeVar("T")


def unwrap(batch: list[Any]) -> list[Any]:
    """The result objects of a batch of traversers, each repeated ``bulk`` times."""
    if not batch or not isinstance(batch[0], Traverser):
        return batch
    objects = list(map(_OBJECT, batch))
    if max(map(_BULK, batch)) == 1:
        return objects
    return [obj for obj, n in zip(objects, map(_BULK, batch), strict=True) for _ in range(n)]


class Channel:
    """One WebSocket connection; not shared between threads (the pool hands it out)."""

    def __init__(self, settings: GremlinSettings, username: str, password: str) -> None:
        self.settings = settings
        self.broken = False
        self._username, self._password = username, password
        self._thread = ThreadPoolExecutor(1, thread_name_prefix="graphmill-gremlin")
        self._transport: AiohttpTransport | None = None
        self._protocol: GremlinServerWSProtocol | None = None

    def _run(self, fn: Callable[..., T], *args: Any) -> T:
        return self._thread.submit(fn, *args).result()

    def _connect(self) -> None:
        options: dict[str, Any] = {"max_content_length": MAX_FRAME_BYTES}
        context = self.settings.ssl_context()
        if context is not None:
            options["ssl_options"] = context
        # the server's own timeout (598) should come first: it says more than silence does
        patience = self.settings.request_timeout_s * 1.5 + 10
        transport = AiohttpTransport(read_timeout=patience, write_timeout=patience, **options)
        self._transport = transport  # set first, so close() releases a half-open one
        transport.connect(self.settings.url, {useragent.userAgentHeader: useragent.userAgent})
        protocol = GremlinServerWSProtocol(
            serializer.GraphBinarySerializersV1(reader=PageReader()),
            username=self._username,
            password=self._password,
            max_content_length=MAX_FRAME_BYTES,
        )
        protocol.connection_made(transport)
        self._protocol = protocol

    def _write(self, request_id: str, message: RequestMessage) -> None:
        if self._protocol is None:
            self._connect()
        assert self._protocol is not None
        self._protocol.write(request_id, message)

    def _read_frame(self, results: dict[str, ResultSet]) -> int:
        assert self._transport is not None and self._protocol is not None
        return int(self._protocol.data_received(self._transport.read(), results))

    def stream(self, bytecode: Bytecode, *, timeout_ms: int | None = None) -> Iterator[list[Any]]:
        """Submit ``bytecode`` and yield its results a frame (``batch_size`` results) at a time.

        Raises the driver's exceptions; a stream left before its end marks the channel broken
        (closing it then waits for the frame being read ahead).
        """
        request_id = str(uuid.uuid4())
        args: dict[str, Any] = {
            "gremlin": bytecode,
            "aliases": {"g": self.settings.traversal_source},
            "batchSize": self.settings.batch_size,
            "evaluationTimeout": timeout_ms or int(self.settings.request_timeout_s * 1000),
        }
        message = RequestMessage(processor="traversal", op="bytecode", args=args)
        results = {request_id: ResultSet(queue.Queue(), request_id)}
        pending = results[request_id].stream
        finished = False
        try:
            self._run(self._write, request_id, message)
            frame = self._thread.submit(self._read_frame, results)
            while not finished:
                finished = frame.result() != 206
                if not finished:  # the next frame is read while the caller uses this one
                    frame = self._thread.submit(self._read_frame, results)
                while not pending.empty():
                    yield unwrap(pending.get_nowait())
        finally:
            if not finished:
                self.broken = True

    def fetch(self, bytecode: Bytecode) -> list[Any]:
        """All results of a small query."""
        return [row for batch in self.stream(bytecode) for row in batch]

    def close(self) -> None:
        transport, self._transport, self._protocol = self._transport, None, None
        if transport is not None:
            with contextlib.suppress(Exception):
                self._run(transport.close)
        self._thread.shutdown(wait=True)


class ChannelPool:
    """Idle channels for reuse; a broken channel is closed instead of returned."""

    def __init__(self, settings: GremlinSettings) -> None:
        self.settings = settings
        self._username, self._password = settings.credentials()
        self._idle: list[Channel] = []
        self._lock = threading.Lock()

    def take(self) -> Channel:
        """An idle channel, or a new one (connected on first use)."""
        with self._lock:
            chosen = self._idle.pop() if self._idle else None
        return chosen or Channel(self.settings, self._username, self._password)

    def give_back(self, channel: Channel) -> None:
        """Keep ``channel`` for reuse, or close it if it is broken."""
        if channel.broken:
            channel.close()
            return
        with self._lock:
            self._idle.append(channel)

    @contextlib.contextmanager
    def channel(self) -> Iterator[Channel]:
        chosen = self.take()
        try:
            yield chosen
        except BaseException:
            chosen.broken = True
            raise
        finally:
            self.give_back(chosen)

    def fetch(self, bytecode: Bytecode) -> list[Any]:
        """All results of a small query, with retries; raises graphmill errors."""

        def attempt() -> list[Any]:
            with self.channel() as channel:
                return channel.fetch(bytecode)

        return call_with_retries(self.settings, attempt)

    def close(self) -> None:
        with self._lock:
            idle, self._idle = self._idle, []
        for channel in idle:
            channel.close()
