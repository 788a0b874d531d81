"""Line-based dumps (N-Triples, N-Quads) staged in parallel, block by block.

Every line of these formats is a statement of its own (blank node labels are kept as
written), so a dump can be cut at line ends into blocks of about :data:`BLOCK_BYTES` and
each block parsed on its own. :func:`line_blocks` cuts the (decompressed) stream in this
process; worker processes parse each block with pyoxigraph, read it into term columns and
write its parts (:func:`stage_block`). A syntax error comes back as data, its line number
made absolute, and the first one in file order is raised. At most ``workers + 1`` blocks are
in memory at once.
"""

from __future__ import annotations

import multiprocessing
from collections import deque
from collections.abc import Callable, Iterator
from concurrent.futures import Future, ProcessPoolExecutor
from pathlib import Path
from typing import Any, BinaryIO

import pyarrow as pa

from graphmill.connectors.rdf._files import (
    FORMAT_NAMES,
    RdfInput,
    opened,
    oxigraph,
    reading,
    syntax_details,
    syntax_error,
)
from graphmill.connectors.rdf._plan import RdfPlan
from graphmill.connectors.rdf._staging import write_parts
from graphmill.connectors.rdf._terms import read_nquads

LINE_FORMATS = frozenset({"n-triples", "n-quads"})
BLOCK_BYTES = 16 << 20


def line_blocks(stream: BinaryIO, size: int = BLOCK_BYTES) -> Iterator[tuple[bytes, int]]:
    """``(block, first line number)`` of whole lines, each about ``size`` bytes or more."""
    line, rest = 1, b""
    while True:
        data = stream.read(size)
        if not data:
            break
        data = rest + data
        end = data.rfind(b"\n") + 1
        if not end:  # no line end yet: a long line
            rest = data
            continue
        block, rest = data[:end], data[end:]
        yield block, line
        line += block.count(b"\n")
    if rest:
        yield rest, line


def stage_block(
    block: bytes,
    first_line: int,
    fmt: str,
    predicates: list[str],
    plan: RdfPlan,
    folder: str,
    name: str,
) -> tuple[int, tuple[str, int | None, int | None] | None]:
    """Parse one block and write its parts; return (quads kept, syntax error or None)."""
    ox = oxigraph()
    try:
        parsed = ox.parse(block, format=getattr(ox.RdfFormat, FORMAT_NAMES[fmt]), lenient=False)
        text = ox.serialize(parsed, format=ox.RdfFormat.N_QUADS)
    except SyntaxError as exc:
        reason, line, column = syntax_details(exc)
        return 0, (reason, None if line is None else line + first_line - 1, column)
    table = read_nquads(text or b"", predicates=pa.array(predicates, pa.string()))
    write_parts(table, plan, Path(folder), name)
    return table.num_rows, None


def stage_in_parallel(
    item: RdfInput,
    plan: RdfPlan,
    predicates: list[str],
    folder: Path,
    prefix: str,
    *,
    workers: int,
    block_bytes: int = BLOCK_BYTES,
    on_block: Callable[[int, int], Any] | None = None,
) -> int:
    """Stage a line-based ``item`` with ``workers`` processes; return the quads kept.

    ``on_block(lines, bytes)`` follows each block handed out (bytes of the file as read)."""
    context = multiprocessing.get_context("spawn")  # no fork of a threaded process
    pending: deque[Future[tuple[int, Any]]] = deque()
    kept = 0
    with ProcessPoolExecutor(max_workers=workers, mp_context=context) as pool:
        try:
            with opened(item) as stream:
                for index, (block, first) in enumerate(line_blocks(stream, block_bytes)):
                    name = f"{prefix}-{index:07d}"
                    args = (block, first, item.format, predicates, plan, str(folder), name)
                    pending.append(pool.submit(stage_block, *args))
                    if on_block is not None:
                        on_block(block.count(b"\n"), len(block))
                    while len(pending) > workers:
                        kept += _result(pending.popleft(), item)
            while pending:
                kept += _result(pending.popleft(), item)
        finally:
            for future in pending:
                future.cancel()
    return kept


def _result(future: Future[tuple[int, Any]], item: RdfInput) -> int:
    with reading(item):
        kept, error = future.result()
    if error is not None:
        raise syntax_error(item, *error)
    return int(kept)
