"""Pages of the gremlin source: a stream cut into pages, and rows into Arrow batches."""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from typing import Any

import pyarrow as pa
from gremlin_python.process.traversal import Bytecode

from graphmill._columns import conform
from graphmill.connectors._declared import ILL_TYPED, accepted_kinds, apply_declared
from graphmill.connectors.base import SOURCE_ID, TARGET_ID, VERTEX_ID
from graphmill.connectors.gremlin._client import Channel, ChannelPool
from graphmill.connectors.gremlin._values import classify, id_strings, meta_json, property_array
from graphmill.spec import PropertySpec


def declared_column(
    values: Sequence[list[Any]], prop: PropertySpec
) -> tuple[pa.Array, dict[str, int] | None, pa.Array | None]:
    """One property column under its declared kind (the gate of
    :mod:`graphmill.connectors._declared`): the column, kind counts (None when it has one
    kind and no ill-typed value) and the text of ill-typed values (None if there are none)."""
    array, found = property_array(values, multi=prop.multi)
    if prop.kind is None or prop.multi:
        return array, found, None
    if found is None or prop.kind == "string":
        column, kinds, raw = apply_declared(array, prop.kind)
        return column, (kinds if raw is not None or found else None), raw
    accepted = accepted_kinds(prop.kind)
    if set(found) <= accepted:  # integers with floats, float declared
        return array, found, None
    # several kinds on the page: keep the accepted values, the others are ill-typed
    kept: list[list[Any]] = []
    texts: list[str | None] = []
    for row in values:
        ok = [classify(v)[0].split("-")[0] in accepted for v in row]
        good = [v for v, fits in zip(row, ok, strict=True) if fits]
        bad = [v for v, fits in zip(row, ok, strict=True) if not fits]
        kept.append(good)
        texts.append(_text(bad[0]) if bad and not good else None)
    array, found = property_array(kept, multi=False)
    column, kinds, _ = apply_declared(array, prop.kind)
    raw = pa.array(texts, pa.string())
    if raw.null_count < len(raw):
        kinds = {**(found or kinds), ILL_TYPED: len(raw) - raw.null_count}
        return column, kinds, raw
    return column, found or kinds, None


def _text(value: Any) -> str:
    """A Gremlin value as the snapshot renders it as text."""
    group, plain = classify(value)
    if group.endswith("-text") or group == "other":
        return str(plain)
    return str(conform(pa.array([plain]), pa.string())[0].as_py())


def rows_to_batch(
    rows: list[list[Any]],
    what: str,
    edges: bool,
    properties: Sequence[PropertySpec],
    meta_columns: Sequence[str],
    raw: dict[str, pa.Array] | None = None,
) -> tuple[pa.RecordBatch, dict[str, dict[str, int]]]:
    """A page in the snapshot's column convention from rows in the layout of
    :func:`._traversals.rows`, and the kind counts of columns that mix kinds or hold
    ill-typed values; the text of those goes into ``raw`` when given."""
    columns = list(zip(*rows, strict=True))
    arrays: dict[str, pa.Array] = {}
    if edges:
        arrays[SOURCE_ID] = id_strings(columns[1], what=f"{what} source vertex")
        arrays[TARGET_ID] = id_strings(columns[2], what=f"{what} target vertex")
        id_strings(columns[0], what=what)  # edge ids: checked for one type, not kept
        first = 3
    else:
        arrays[VERTEX_ID] = id_strings(columns[0], what=what)
        first = 1
    kinds: dict[str, dict[str, int]] = {}
    for n, prop in enumerate(properties):
        array, found, text = declared_column(columns[first + n], prop)
        arrays[prop.name] = array
        if found:
            kinds[prop.name] = found
        if text is not None and raw is not None:
            raw[prop.name] = text
    first += len(properties)
    for n, name in enumerate(meta_columns):
        arrays[name] = meta_json(columns[first + n])
    return pa.RecordBatch.from_pydict(arrays), kinds


class StreamPager:
    """One unit's open stream, cut into pages; after a failure it reopens after the last
    id it returned (``traversal(after)`` builds the request)."""

    def __init__(
        self,
        pool: ChannelPool,
        traversal: Callable[[Any], Bytecode],
        page_size: int,
        after: Any,
    ) -> None:
        self.pool, self.traversal, self.page_size, self.after = pool, traversal, page_size, after
        self._channel: Channel | None = None
        self._batches: Iterator[list[Any]] | None = None
        self._buffer: list[Any] = []
        self._ended = False

    def _open(self) -> None:
        channel = self.pool.take()
        self._channel = channel
        self._batches = channel.stream(self.traversal(self.after))

    def next_rows(self) -> list[Any]:
        """Up to ``page_size`` rows after ``self.after``; [] at the end. On any error the
        stream is dropped, so a retry starts afresh after the last returned id."""
        try:
            while len(self._buffer) < self.page_size and not self._ended:
                if self._batches is None:
                    self._open()
                assert self._batches is not None
                batch = next(self._batches, None)
                if batch is None:
                    self._ended = True
                    self._release(broken=False)
                else:
                    self._buffer.extend(batch)
        except BaseException:
            self._buffer = []
            self._release(broken=True)
            raise
        rows, self._buffer = self._buffer[: self.page_size], self._buffer[self.page_size :]
        if rows:
            self.after = rows[-1][0]
        return rows

    def _release(self, *, broken: bool) -> None:
        channel, self._channel, self._batches = self._channel, None, None
        if channel is not None:
            channel.broken = channel.broken or broken
            self.pool.give_back(channel)

    def close(self) -> None:
        if self._batches is not None:
            self._batches.close()  # type: ignore[attr-defined]
        self._release(broken=True)
