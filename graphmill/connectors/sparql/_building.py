"""Pages built from slices of an answer, so that client memory does not grow with it.

A page of ``page_size`` rows used to be mapped from ``page_size`` rows of full RDF terms
(each row's IRIs, datatype IRIs and language tags as text), and the mapping's working tables
were several times that. Here an answer is cut into slices of at most ``MAP_ROWS`` rows, each
moved forward to the next change of the unit's first variable (so a subject's rows, when
the server sends them together, share a slice; values equal as values are made distinct per
slice here and per unit by the snapshot, from ``Page.identity``); each slice is mapped as it
arrives and only its mapped rows are kept until the page is taken. Slices of one page are
joined with the snapshot merge's own type rules (:func:`~graphmill._columns.unify_types`), so
a page's rows are those the merge would make of the slices as separate pages.
"""

from __future__ import annotations

from collections.abc import Iterator

import pyarrow as pa
import pyarrow.compute as pc

from graphmill._columns import conform, unify_types
from graphmill.connectors.base import Page, WorkUnit
from graphmill.connectors.rdf._mapping import unit_pages
from graphmill.connectors.rdf._plan import RdfPlan

MAP_ROWS = 16_384  # term rows mapped at a time
_WHOLE = 1 << 62  # "no page limit" for unit_pages: one page per call


def boundary(keys: pa.Array, start: int) -> int | None:
    """The first index >= ``start`` (>= 1) where the key differs from the one before."""
    if len(keys) <= start:
        return None
    changed = pc.not_equal(keys.slice(start), keys.slice(start - 1, len(keys) - start))
    hits = pc.indices_nonzero(pc.fill_null(changed, True))
    return start + hits[0].as_py() if len(hits) else None


def slices(terms: pa.Table, first: str, rows: int | None = None) -> Iterator[pa.Table]:
    """``terms`` in slices of about ``rows`` (default ``MAP_ROWS``) rows, each cut at a
    change of ``first``."""
    rows = rows or MAP_ROWS
    keys = terms.column(first).combine_chunks() if terms.num_rows > rows else None
    start = 0
    while start < terms.num_rows:
        cut = boundary(keys, start + rows) if keys is not None else None
        end = terms.num_rows if cut is None else cut
        yield terms.slice(start, end - start)
        start = end


class PageBuilder:
    """Maps slices of one unit's answer as they come; :meth:`take` makes them one page."""

    def __init__(self, plan: RdfPlan, unit: WorkUnit) -> None:
        self.plan, self.unit = plan, unit
        self._pages: list[Page] = []

    def add(self, terms: pa.Table) -> None:
        """Map one slice (a subject's rows must not straddle two slices)."""
        if terms.num_rows:
            self._pages.extend(unit_pages(self.plan, self.unit, terms, page_rows=_WHOLE))

    def take(self, cursor: str) -> Page | None:
        """The slices added since the last take as one page with ``cursor``; None if none."""
        pages, self._pages = self._pages, []
        if not pages:
            return None
        page = pages[0] if len(pages) == 1 else _joined(pages)
        page.cursor = cursor
        return page


def _joined(pages: list[Page]) -> Page:
    """One page of several with the same columns: types unified, kinds summed, raw joined."""
    names = pages[0].batch.schema.names
    columns = []
    for i in range(len(names)):
        chunks = [p.batch.column(i) for p in pages]
        target = unify_types(c.type for c in chunks)
        columns.append(pa.concat_arrays([conform(c, target) for c in chunks]))
    kinds: dict[str, dict[str, int]] | None = None
    if any(p.value_kinds for p in pages):
        kinds = {}
        for p in pages:
            for name, counts in (p.value_kinds or {}).items():
                total = kinds.setdefault(name, {})
                for kind, n in counts.items():
                    total[kind] = total.get(kind, 0) + n
        kinds = {name: dict(sorted(counts.items())) for name, counts in kinds.items()}
    raw: dict[str, pa.Array] | None = None
    if any(p.raw for p in pages):
        raw = {}
        for name in dict.fromkeys(k for p in pages for k in (p.raw or {})):
            parts = [
                (p.raw or {}).get(name, pa.nulls(p.batch.num_rows, pa.string())) for p in pages
            ]
            raw[name] = pa.concat_arrays([part.cast(pa.string()) for part in parts])
    identity: dict[str, pa.Array] | None = None
    if any(p.identity for p in pages):
        identity = {
            name: pa.concat_arrays([(p.identity or {})[name].cast(pa.string()) for p in pages])
            for name in (pages[0].identity or {})
        }
    batch = pa.RecordBatch.from_arrays(columns, names=names)
    return Page(batch=batch, value_kinds=kinds, raw=raw, identity=identity)


__all__ = ["MAP_ROWS", "PageBuilder", "boundary", "slices"]
