"""Policed edges that an engine may keep until they are written, read back in batches.

Contract: an :class:`EdgeStream` holds one relation's ``mapped-edges`` result: its count,
whether repeats were merged (a multiplicity), the drop/merge/add counts, and ``read``, which
yields the edges in their final order, ``(source, target)`` ascending as
:func:`~graphmill.transform._edges.apply_edge_policy` sorts them (``reverse``: endpoints
swapped and re-sorted as :meth:`EdgeArrays.reversed` does), as :class:`EdgeArrays` batches.
Batch sizes are the engine's; whatever reads them must not depend on them. A stream can be
read more than once while its engine is open.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass, field

import numpy as np

from graphmill.transform._edges import DROP_REASONS, EdgeArrays, EdgeOutcome

BATCH = 1 << 20


@dataclass
class EdgeStream:
    count: int
    merged_repeats: bool  # edges carry a multiplicity
    read: Callable[[bool], Iterator[EdgeArrays]]
    dropped: dict[str, int] = field(default_factory=lambda: dict.fromkeys(DROP_REASONS, 0))
    merged: int = 0
    added_reverses: int = 0
    release: Callable[[], None] = lambda: None  # frees what the engine keeps for the stream

    @classmethod
    def in_memory(cls, outcome: EdgeOutcome) -> EdgeStream:
        """A stream over edges already in memory (engines that police in Python)."""
        edges = outcome.edges

        def read(reverse: bool) -> Iterator[EdgeArrays]:
            ordered = edges.reversed() if reverse else edges
            for start in range(0, len(ordered), BATCH):
                yield ordered.take(np.arange(start, min(start + BATCH, len(ordered))))

        return cls(
            len(edges),
            edges.multiplicity is not None,
            read,
            dict(outcome.dropped),
            outcome.merged,
            outcome.added_reverses,
        )

    def edges(self, *, reverse: bool = False) -> EdgeArrays:
        """Every edge in memory, in order."""
        parts = list(self.read(reverse))
        empty = np.zeros(0, dtype=np.int64)

        def joined(pick: Callable[[EdgeArrays], np.ndarray | None]) -> np.ndarray:
            arrays = [np.asarray(pick(p), dtype=np.int64) for p in parts]
            return np.concatenate(arrays) if arrays else empty

        multiplicity = joined(lambda p: p.multiplicity) if self.merged_repeats else None
        return EdgeArrays(
            joined(lambda p: p.source), joined(lambda p: p.target), joined(lambda p: p.rows),
            multiplicity,
        )  # fmt: skip

    def outcome(self) -> EdgeOutcome:
        """The edges in memory with the counts (what ``Engine.mapped_edges`` returns); the
        stream is released."""
        edges = self.edges()
        self.release()
        return EdgeOutcome(edges, dict(self.dropped), self.merged, self.added_reverses)
