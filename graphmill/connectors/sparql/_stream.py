"""single-stream: one unpaged SELECT per unit, cut into pages as it streams.

The answer is handed on in slices (:mod:`._building`) cut at a change of the unit's first
variable, so the rows of one vertex (or one edge source), when the server sends them
together, share a slice; a page ends with the first slice that brings it to ``page_size``
rows or more. Nothing is kept per row: the digest is fed from Arrow's buffers.

The cursor holds the number of rows staged and a SHA-256 digest of them in answer order.
To resume -- after a dropped connection within the pull, or in the next run -- the same
SELECT is sent again, the staged rows are skipped while their digest is recomputed, and
reading goes on only if the digests agree: SPARQL promises no order for an unordered
SELECT, so a server that answers in another order is caught, not trusted.
"""

from __future__ import annotations

import hashlib
import json
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass

import pyarrow as pa
import pyarrow.compute as pc

from graphmill.connectors.sparql import _building
from graphmill.connectors.sparql._failures import TransientError
from graphmill.connectors.sparql._http import SparqlClient
from graphmill.errors import GraphmillError, MalformedResponseError, SourceUnavailableError

DIGEST_ROWS = 8192  # rows hashed at a time


@dataclass
class StreamCursor:
    rows: int = 0
    digest: str = hashlib.sha256().hexdigest()
    finished: bool = False

    def encode(self) -> str:
        data = {"paging": "single-stream", "rows": self.rows, "digest": self.digest}
        return json.dumps({**data, "finished": self.finished}, sort_keys=True)

    @classmethod
    def decode(cls, text: str | None) -> StreamCursor:
        if text is None:
            return cls()
        data = json.loads(text)
        return cls(int(data["rows"]), str(data["digest"]), bool(data.get("finished")))


def _feed(digest: hashlib._Hash, terms: pa.Table, variables: tuple[str, ...]) -> None:
    """Add rows to the running digest: every variable's text, kind, datatype and language.

    Rows go in slices of ``DIGEST_ROWS`` straight from Arrow's buffers, so a page costs no
    Python copy of its text; the bytes fed are those of the whole page joined at once."""
    for start in range(0, terms.num_rows, DIGEST_ROWS):
        rows = terms.slice(start, DIGEST_ROWS)
        columns = []
        for name in variables:
            for suffix in ("", "_kind", "_datatype", "_lang"):
                columns.append(pc.fill_null(rows.column(name + suffix), "\x00"))
        lines = pc.binary_join_element_wise(*columns, "\x1f").combine_chunks()
        offsets = pa.array([0, len(lines)], pa.int32())
        joined = pc.binary_join(pa.ListArray.from_arrays(offsets, lines), "\x1e")[0]
        digest.update(memoryview(joined.as_buffer()))
        digest.update(b"\x1e")


class StreamReader:
    """Reads one unit as a single streamed SELECT; yields (term table, cursor) per page."""

    def __init__(
        self,
        client: SparqlClient,
        query: str,
        variables: tuple[str, ...],
        *,
        page_rows: int,
        where: str,
        truncated: Callable[[int], bool],
    ) -> None:
        self.client, self.query, self.variables = client, query, variables
        self.page_rows = max(1, page_rows)
        self.where = where
        self.truncated = truncated

    def pages(self, cursor: StreamCursor) -> Iterator[tuple[pa.Table, StreamCursor | None]]:
        """Slices of the answer; the last slice of each page carries the page's cursor."""
        state = StreamCursor(cursor.rows, cursor.digest, cursor.finished)
        attempt = 1
        while not state.finished:
            try:
                yield from self._one_pass(state)
            except TransientError as exc:
                if attempt >= self.client.settings.retries.attempts:
                    exc.error.message += f" (after {attempt} tries)"
                    raise exc.error from exc
                time.sleep(self.client.wait_before(attempt))
                attempt += 1

    def _one_pass(self, state: StreamCursor) -> Iterator[tuple[pa.Table, StreamCursor | None]]:
        """One request: skip and check the staged rows, then yield slices; updates ``state``.

        Slices hold at most about ``MAP_ROWS`` rows and end where the first variable changes;
        the slice that ends a page (``page_rows`` rows or more since the last) comes with
        the cursor of everything read so far, the others with None."""
        running = hashlib.sha256()
        to_skip = state.rows
        slice_rows = min(self.page_rows, _building.MAP_ROWS)
        pending: list[pa.Table] = []
        pending_rows = in_page = 0
        empty: pa.Table | None = None
        for terms in self.client.stream(self.query, where=self.where):
            empty = terms.slice(0, 0)
            if to_skip:
                skipped = terms.slice(0, to_skip)
                _feed(running, skipped, self.variables)
                to_skip -= skipped.num_rows
                terms = terms.slice(skipped.num_rows)
                if to_skip == 0 and running.hexdigest() != state.digest:
                    raise self._reordered()
            if terms.num_rows:
                pending.append(terms)
                pending_rows += terms.num_rows
            while pending_rows >= slice_rows:
                table = pa.concat_tables(pending) if len(pending) > 1 else pending[0]
                keys = table.column(self.variables[0]).combine_chunks()
                cut = _building.boundary(keys, slice_rows)
                if cut is None:
                    break  # the slice's last key goes on: wait for more rows
                piece, rest = table.slice(0, cut), table.slice(cut)
                pending, pending_rows = [rest], rest.num_rows
                _feed(running, piece, self.variables)
                state.rows += piece.num_rows
                state.digest = running.hexdigest()
                in_page += piece.num_rows
                if in_page >= self.page_rows:
                    in_page = 0
                    yield piece, StreamCursor(state.rows, state.digest)
                else:
                    yield piece, None
        if to_skip:
            raise self._reordered()
        last = pa.concat_tables(pending) if pending else empty
        if last is not None and last.num_rows:
            _feed(running, last, self.variables)
            state.rows += last.num_rows
            state.digest = running.hexdigest()
            in_page += last.num_rows
        if self.truncated(state.rows):
            raise self._capped(state.rows)
        state.finished = True
        if last is not None and in_page:
            yield last, StreamCursor(state.rows, state.digest, finished=True)

    def _reordered(self) -> GraphmillError:
        return SourceUnavailableError(
            "cannot resume: the endpoint no longer returns the rows staged so far first "
            "(an unordered SELECT has no promised order, or the data changed)",
            source=self.where,
            hint="delete the '.staging' folder beside the snapshot and pull again, or use "
            "source.paging: key-range, which does not rely on result order",
        )

    def _capped(self, rows: int) -> GraphmillError:
        return MalformedResponseError(
            f"the endpoint returned exactly {rows} rows but holds more: it caps results "
            "(e.g. Virtuoso's ResultSetMaxRows)",
            source=self.where,
            hint="raise the server's result limit, or use source.paging: key-range",
        )
