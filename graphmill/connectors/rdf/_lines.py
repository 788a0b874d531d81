"""Line-based dumps (N-Triples, N-Quads) staged by worker processes, a block of lines each.

A statement of these formats never spans lines, so the file (decompressed, if it is an
archive) is cut into blocks of whole lines of about :data:`BLOCK_BYTES`, read by this process
and handed to :data:`WORKERS` processes (pyoxigraph's parser holds Python's GIL
for each quad, so threads cannot share the parse). Each worker:

1. parses the block with pyoxigraph's strict parser and has its N-Quads writer write it
   again, canonically -- unless it is N-Triples already written so
   (:func:`._triples.written_as_is`: no escapes, no control characters, lower-case
   language tags, single spaces), which is only parsed, to check it;
2. reads and stages it as a block of the single-stream path (:func:`._staging.write_parts`).

Blank node labels are kept as written in both paths, so cutting the file changes nothing.
A syntax error comes back with its line number in the whole file. Memory: at most
``WORKERS + 1`` blocks are in flight.
"""

from __future__ import annotations

import collections
import hashlib
import io
import multiprocessing
from collections import deque
from collections.abc import Iterator
from concurrent.futures import Future, ProcessPoolExecutor
from pathlib import Path
from typing import Any, BinaryIO

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill.connectors._fingerprints import FileFingerprints
from graphmill.connectors.rdf._files import (
    FORMAT_NAMES,
    RdfInput,
    opened,
    oversized_term,
    oxigraph,
    syntax_details,
    syntax_error,
)
from graphmill.connectors.rdf._plan import RdfPlan
from graphmill.connectors.rdf._reading import ReadingReport
from graphmill.connectors.rdf._terms import _GRAPH_TAIL, _byte_slice, split_terms
from graphmill.connectors.rdf._triples import fast_triples, written_as_is

LINE_FORMATS = frozenset({"n-triples", "n-quads"})
BLOCK_BYTES = 16 << 20
WORKERS = 2  # parsing processes: about 370 MiB each at their peak (measured)
PROCESSES_FROM = 64 << 20  # bytes of a file (as stored) from which workers are started


def _iri_or_blank(cells: pa.Array) -> pa.Array:
    """Values of IRI or blank-node cells as the writer writes them (IRIs hold no escapes)."""
    return pc.if_else(pc.starts_with(cells, "<"), _byte_slice(cells, 1, -1), cells)


def staged_quads(data: bytes, predicates: pa.Array, *, graphs: bool = True) -> pa.Table:
    """N-Quads as pyoxigraph's writer writes them -> the columns :func:`._staging.split_roles`
    uses: ``s p o o_kind o_datatype o_lang g`` (``g`` null in the default graph); quads with
    other ``predicates`` are dropped before objects are read. The same values as
    :func:`._terms.read_nquads`, cheaper: lines are cut with numpy, and subjects and graphs,
    which the writer never escapes, are not parsed as general terms; triples (no ``graphs``)
    are cut with :func:`._triples.fast_triples` where their lines allow."""
    if not graphs and (fast := fast_triples(data, predicates)) is not None:
        return fast
    if data and not data.endswith(b"\n"):
        data += b"\n"
    ends = np.flatnonzero(np.frombuffer(data, np.uint8) == 10)
    offsets = np.zeros(len(ends) + 1, np.int64)
    offsets[1:] = ends + 1
    lines = pa.LargeStringArray.from_buffers(len(ends), pa.py_buffer(offsets), pa.py_buffer(data))
    lines.validate(full=True)  # UTF-8
    lines = lines.cast(pa.string()) if len(data) < (1 << 31) else lines
    lines = lines.filter(pc.greater(pc.binary_length(lines), 1))
    parts = pc.split_pattern(lines, pattern=" ", max_splits=2)
    predicate = _byte_slice(pc.list_element(parts, 1), 1, -1)
    keep = pc.is_in(predicate, value_set=predicates)
    parts, predicate = parts.filter(keep), predicate.filter(keep)
    rest = _byte_slice(pc.list_element(parts, 2), 0, -3)  # the closing " .\n"
    if graphs:
        graph = pc.struct_field(pc.extract_regex(rest, _GRAPH_TAIL), "g")
        rest = pc.replace_substring_regex(rest, pattern=_GRAPH_TAIL, replacement="")
        graph = _iri_or_blank(graph)
    else:
        graph = pa.nulls(len(rest), pa.string())
    out = {"s": _iri_or_blank(pc.list_element(parts, 0)), "p": predicate}
    out.update({"o" + k: v for k, v in split_terms(rest, where="N-Quads").items()})
    out["g"] = graph
    return pa.table(out)


def stage_block(
    block: bytes, first_line: int, fmt: str, predicates: list[str], plan: RdfPlan, folder: str,
    name: str,
) -> tuple[str, Any]:  # fmt: skip
    """In a worker: check, canonicalize and stage one block of lines. Returns ``("quads",
    (parsed, kept))``, ``("syntax", (reason, line, column))`` or ``("oversized", None)``."""
    from graphmill.connectors.rdf._staging import write_parts

    ox = oxigraph()
    rdf = getattr(ox.RdfFormat, fmt)
    wanted = pa.array(predicates, pa.string())
    table = None
    try:
        if fmt == "N_TRIPLES" and written_as_is(block):
            collections.deque(ox.parse(block, format=rdf, lenient=False), maxlen=0)  # strict
            table, text = fast_triples(block, wanted), block
        if table is None:
            parsed = ox.parse(block, format=rdf, lenient=False)
            text = ox.serialize(parsed, format=ox.RdfFormat.N_QUADS)
    except SyntaxError as exc:
        reason, line, column = syntax_details(exc)
        return "syntax", (reason, None if line is None else line + first_line - 1, column)
    except MemoryError as exc:
        if "buffer maximal size" not in str(exc):
            raise
        return "oversized", None
    if table is None:
        table = staged_quads(text, wanted, graphs=fmt == "N_QUADS")
    write_parts(table, plan, Path(folder), name)
    return "quads", (text.count(b"\n"), table.num_rows)


def line_blocks(handle: BinaryIO, size: int) -> Iterator[tuple[bytes, int]]:
    """(block, number of its first line): whole lines of about ``size`` bytes (more when
    one line is longer)."""
    carry, line = b"", 1
    while data := handle.read(size):
        data = carry + data if carry else data
        cut = data.rfind(b"\n") + 1
        if not cut:
            carry = data
            continue
        block, carry = data[:cut], data[cut:]
        yield block, line
        line += block.count(b"\n")
    if carry:
        yield carry, line


class HashedFile(io.FileIO):
    """A file opened for reading that hashes (sha256) every byte read from it."""

    def __init__(self, path: Path) -> None:
        super().__init__(path, "rb")
        self.sha256 = hashlib.sha256()

    def read(self, size: int | None = -1) -> bytes:
        data = super().read(size)
        self.sha256.update(data or b"")
        return data or b""

    def readinto(self, buffer: Any) -> int:
        size = super().readinto(buffer) or 0
        self.sha256.update(memoryview(buffer)[:size])
        return size

    def readall(self) -> bytes:
        return self.read(-1)

    def finish(self) -> str:
        """Read what is left unread; the hex digest of the whole file."""
        while self.read(1 << 20):
            pass
        return self.sha256.hexdigest()


def stage_lines(
    item: RdfInput,
    plan: RdfPlan,
    predicates: list[str],
    folder: Path,
    prefix: str,
    *,
    workers: int | None = None,
    block_bytes: int | None = None,
    report: ReadingReport | None = None,
    prints: FileFingerprints | None = None,
) -> int:
    """Stage ``item`` (N-Triples or N-Quads) with worker processes; return the quads with a
    wanted predicate (as :func:`._staging.stage_stream`). The file's sha256, computed while
    reading it, is told to ``prints``."""
    fmt = FORMAT_NAMES[item.format]
    context = multiprocessing.get_context("spawn")  # forking a process with threads can hang
    pool = ProcessPoolExecutor(max_workers=workers or WORKERS, mp_context=context)
    pending: deque[Future[tuple[str, Any]]] = collections.deque()
    kept = 0

    def collect() -> None:
        nonlocal kept
        outcome, detail = pending.popleft().result()
        if outcome == "syntax":
            raise syntax_error(item, *detail)
        if outcome == "oversized":
            raise oversized_term(item)
        kept += detail[1]
        if report is not None:
            report.update(detail[0])

    before = item.path.stat()
    try:
        with HashedFile(item.path) as raw, opened(item, raw) as handle:
            if report is not None:
                report.position.append(raw.tell)
            blocks = line_blocks(handle, block_bytes or BLOCK_BYTES)
            for index, (block, first) in enumerate(blocks):
                name = f"{prefix}-{index:07d}"
                args = (block, first, fmt, predicates, plan, str(folder), name)
                pending.append(pool.submit(stage_block, *args))
                while len(pending) > (workers or WORKERS):
                    collect()
            while pending:
                collect()
            digest = raw.finish()
        after = item.path.stat()
        if prints is not None and (after.st_size, after.st_mtime_ns) == (
            before.st_size,
            before.st_mtime_ns,
        ):
            prints.remember(item.path, before.st_size, before.st_mtime_ns, digest)
    finally:
        pool.shutdown(wait=True, cancel_futures=True)
    return kept
