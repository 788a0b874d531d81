"""Progress of reading RDF files: MiB of the file read (of its size on disk), quads, rate.

One progress task per file; its total is the file's size in MiB (compressed files count their
compressed bytes), so a terminal shows the time left. Silent unless the pipeline was given a
terminal progress display (``--no-progress`` and non-terminals give none).
"""

from __future__ import annotations

import itertools
import time
from collections.abc import Callable, Iterator
from typing import Any

from graphmill._progress import Progress
from graphmill.connectors.rdf._files import RdfInput

_MIB = 1 << 20
LOAD_BLOCK = 250_000  # quads per bulk_extend call


class ReadingReport:
    """Reports the reading of ``item`` to ``progress``; call :meth:`update` now and then."""

    def __init__(self, progress: Progress, item: RdfInput, verb: str = "read") -> None:
        self.label = f"{verb} {item.shown}"
        self.task = progress.task(f"{self.label} (MiB)", total=max(1, -(-item.size // _MIB)))
        self.position: list[Callable[[], int]] = []  # filled by _files.quads
        self.quads = 0
        self._mib = 0
        self._started = time.monotonic()

    def update(self, quads: int) -> None:
        """``quads`` more were read; the file position is asked of :func:`._files.quads`."""
        self.quads += quads
        mib = self.position[0]() // _MIB if self.position else self._mib
        if mib > self._mib:
            self.task.advance(mib - self._mib)
            self._mib = mib
        rate = self.quads / max(time.monotonic() - self._started, 1e-9)
        self.task.describe(f"{self.label} (MiB): {self.quads:,} quads, {rate:,.0f}/s")


def quad_blocks(
    quads: Iterator[Any], report: ReadingReport, size: int = LOAD_BLOCK
) -> Iterator[list[Any]]:
    """``quads`` in lists of ``size``, telling ``report`` after each. Loading a store one
    block per ``bulk_extend`` bounds the bulk loader's memory (about 850 MiB for one call of
    1.1M quads, 280 MiB in blocks of 200k, measured with pyoxigraph 0.5.13)."""
    while block := list(itertools.islice(quads, size)):
        yield block
        report.update(len(block))
