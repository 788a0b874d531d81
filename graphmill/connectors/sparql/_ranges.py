"""Key ranges: slices of a unit by the ``STR()`` of its subjects, sized from a sample.

A vertex type's members are streamed once (:class:`KeySampler`, memory bounded by
``cap``); the sampled IRIs, cut to their leading printable ASCII (so the server compares them
the same way whether it orders strings by code point or by UTF-16 unit, and so they need no
escapes), become the candidate bounds. A unit is then read range by range, each range's size
chosen from the rows per member seen so far (:class:`RangePlanner`). When a server's result
cap cut the membership answer itself, the sample holds no bound inside some ranges; a range
that is then found cut is sampled again on its own (:meth:`RangePlanner.refine`). Ranges are
``[None, b1)``, ``[b1, b2)``, ... ``[bk, None)``: whatever the bounds, they cover every IRI
exactly once, so the snapshot does not depend on the sample. Blank-node subjects, which
``STR()`` cannot order, are read as one slice of their own.
"""

from __future__ import annotations

import bisect
import json
from dataclasses import asdict, dataclass

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill.connectors.rdf._queries import KeyRange
from graphmill.errors import SourceUnavailableError

SAMPLE_CAP = 4096
_BOUND = r"^(?P<bound>[\x21\x23-\x5b\x5d-\x7e]*)"  # printable ASCII without " and \


class KeySampler:
    """Collector of a membership query's answers: a stride sample of the member IRIs.

    Every ``stride``-th IRI (in answer order) is kept; when more than ``2 * cap`` are kept,
    every other one is dropped and the stride doubles.
    """

    def __init__(self, variable: str, cap: int = SAMPLE_CAP) -> None:
        self.variable = variable
        self.cap = cap
        self.stride = 1
        self.iris = 0
        self.blanks = 0
        self._kept: list[pa.Array] = []
        self._kept_rows = 0

    def add(self, terms: pa.Table) -> None:
        kind = terms.column(self.variable + "_kind").combine_chunks()
        self.blanks += int(pc.sum(pc.equal(kind, "blank")).as_py() or 0)
        iris = terms.column(self.variable).combine_chunks().filter(pc.equal(kind, "iri"))
        index = np.arange(self.iris, self.iris + len(iris))
        self.iris += len(iris)
        kept = iris.filter(pa.array(index % self.stride == 0))
        self._kept.append(kept)
        self._kept_rows += len(kept)
        while self._kept_rows > 2 * self.cap:
            every = pa.concat_arrays(self._kept)
            # the kept IRIs sit at answer positions 0, s, 2s, ...: keep 0, 2s, 4s, ...
            halved = every.filter(pa.array(np.arange(len(every)) % 2 == 0))
            self._kept, self._kept_rows, self.stride = [halved], len(halved), self.stride * 2

    def sample(self) -> KeySample:
        kept = pa.concat_arrays(self._kept) if self._kept else pa.array([], pa.string())
        cut = pc.struct_field(pc.extract_regex(kept, _BOUND), "bound")
        bounds = pc.unique(cut.filter(pc.greater(pc.utf8_length(cut), 0)))
        ordered = pc.sort_indices(bounds.cast(pa.binary()))
        return KeySample(
            bounds=tuple(bounds.take(ordered).to_pylist()),
            iri_members=self.iris,
            blank_members=self.blanks,
            weight=self.iris / max(1, self._kept_rows),
        )


@dataclass(frozen=True)
class KeySample:
    """Sorted candidate bounds; each stands for about ``weight`` member IRIs. ``complete`` is
    False when a result cap cut the membership answer: the member counts are then lower
    bounds, and blank-node members may exist unseen."""

    bounds: tuple[str, ...]
    iri_members: int
    blank_members: int
    weight: float
    complete: bool = True

    @property
    def members(self) -> int:
        return self.iri_members + self.blank_members

    def merged(self, finer: KeySample) -> KeySample:
        """This sample plus the bounds of ``finer``, a sample of some of the same keys (one
        slice's members, read again because the first answer was cut by a result cap)."""
        bounds = tuple(sorted(set(self.bounds) | set(finer.bounds)))  # ASCII: code point order
        return KeySample(
            bounds=bounds,
            iri_members=max(self.iri_members, finer.iri_members),
            blank_members=self.blank_members,
            weight=min(self.weight, finer.weight),
            complete=self.complete,
        )


@dataclass
class RangeCursor:
    """Where a key-range read stands: every IRI key below ``low`` (and the blank-node slice,
    when ``blanks_done``) is staged; ``rows`` and ``members`` measure what was read so far."""

    low: str | None = None
    blanks_done: bool = False
    finished: bool = False
    rows: int = 0
    members: float = 0.0
    row_cap: int | None = None  # a result cap the server was found to apply

    def advance(self, key_range: KeyRange, rows: int, members: float) -> None:
        """Record that ``key_range`` (``rows`` rows, about ``members`` members) is staged."""
        if key_range.blank_nodes:
            self.blanks_done = True
        else:
            self.low, self.finished = key_range.high, key_range.high is None
        self.rows += rows
        self.members += members

    def encode(self) -> str:
        return json.dumps({"paging": "key-range", **asdict(self)}, sort_keys=True)

    @classmethod
    def decode(cls, text: str | None) -> RangeCursor:
        if text is None:
            return cls()
        try:
            data = json.loads(text)
            data.pop("paging")
            return cls(**data)
        except (ValueError, KeyError, TypeError) as exc:
            raise SourceUnavailableError(
                f"cannot resume from the staged cursor {text[:80]!r}",
                hint="delete the '.staging' folder beside the snapshot and pull again",
            ) from exc


class RangePlanner:
    """Chooses the next range of a unit so that it holds about ``target_rows`` rows."""

    def __init__(self, sample: KeySample, target_rows: int) -> None:
        self.sample = sample
        self.target_rows = max(1, target_rows)

    def whole_unit_fits(self, cursor: RangeCursor) -> bool:
        """True when one unfiltered query can answer the unit (nothing read yet, and the
        members times one row each fit a page)."""
        fits = self.sample.complete and self.sample.members <= self.target_rows
        return cursor.low is None and not cursor.rows and fits

    def next_range(self, cursor: RangeCursor) -> tuple[KeyRange, float]:
        """The next slice after ``cursor`` and the estimated members it covers."""
        maybe_blanks = self.sample.blank_members or not self.sample.complete
        if maybe_blanks and not cursor.blanks_done:
            return KeyRange(blank_nodes=True), float(self.sample.blank_members)
        bounds = self.sample.bounds
        # the slice [bounds[start], bounds[start + step]) holds ``step`` sampled members
        start = 0 if cursor.low is None else bisect.bisect_left(bounds, cursor.low)
        # rows per member so far; none yet (or only an empty blank-node slice): guess one
        per_member = cursor.rows / cursor.members if cursor.rows and cursor.members else 1.0
        # under a result cap aim at half of it, a quarter while the rows per member are
        # unknown (a unit with two rows per member would fill the cap and be read again)
        share = 2 if cursor.rows else 4
        limit = (
            self.target_rows
            if cursor.row_cap is None
            else min(self.target_rows, cursor.row_cap // share)
        )
        wanted = max(1.0, limit / max(per_member, 1e-9))
        step = max(1, int(wanted / max(self.sample.weight, 1e-9)))
        end = start + step
        high = bounds[end] if end < len(bounds) else None
        covered = max(1, min(end, len(bounds)) - start) * self.sample.weight
        return KeyRange(low=cursor.low, high=high), covered

    def refine(self, finer: KeySample) -> None:
        """Add the bounds of a finer sample of part of the keys (see ``KeySample.merged``)."""
        self.sample = self.sample.merged(finer)

    def narrower(self, key_range: KeyRange) -> KeyRange | None:
        """About half of ``key_range`` (same low bound), or None if no sampled bound lies
        strictly inside it."""
        if key_range.blank_nodes:
            return None
        bounds = self.sample.bounds
        start = 0 if key_range.low is None else bisect.bisect_right(bounds, key_range.low)
        end = len(bounds) if key_range.high is None else bisect.bisect_left(bounds, key_range.high)
        if end <= start:
            return None
        return KeyRange(low=key_range.low, high=bounds[start + (end - start) // 2])
