"""``sparql-endpoint``: each work unit read from a SPARQL 1.1 endpoint over HTTP.

The units, their SELECTs and the term -> page mapping are those of the RDF sources
(:mod:`graphmill.connectors.rdf`), so an endpoint holding the same data gives the same
snapshot as a dump. What this module adds is paging (see the package doc for the strategies),
truncation checks and resumable cursors.
"""

from __future__ import annotations

import json
import threading
from collections.abc import Iterator
from dataclasses import replace
from typing import Any, ClassVar

import pyarrow as pa
import pyarrow.compute as pc

from graphmill.connectors._fingerprints import key_digest
from graphmill.connectors.base import GraphSource, Page, Provenance, SourceCapabilities, WorkUnit
from graphmill.connectors.rdf._plan import plan_units, resolve
from graphmill.connectors.rdf._queries import (
    VERTEX,
    KeyRange,
    fingerprint_query,
    keys_query,
    unit_query,
    unit_variables,
)
from graphmill.connectors.sparql._building import PageBuilder, slices
from graphmill.connectors.sparql._http import ServerInfo, SparqlClient
from graphmill.connectors.sparql._quirks import (
    UNION_DEFAULT_GRAPH,
    fit_results_format,
    with_float_text,
)
from graphmill.connectors.sparql._ranges import KeySample, KeySampler, RangeCursor, RangePlanner
from graphmill.connectors.sparql._settings import (
    EndpointSettings,
    check_query_url,
    endpoint_settings,
)
from graphmill.connectors.sparql._stream import StreamCursor, StreamReader
from graphmill.errors import GraphmillError, MalformedResponseError
from graphmill.spec import PipelineSpec

#: what ``paging: auto`` picks per server, and the result cap the server is known to apply
AUTO_PAGING: dict[str, tuple[str, int | None]] = {
    "oxigraph": ("single-stream", None),
    "fuseki": ("single-stream", None),
    "virtuoso": ("key-range", 10_000),  # ResultSetMaxRows default
    "unknown": ("key-range", None),
}


def looks_capped(rows: int, cap: int | None) -> bool:
    """Whether a result of ``rows`` rows may have been cut by a server cap: a known cap, or a
    round number of at least 1000 (caps are configured as round numbers)."""
    return rows > 0 and (rows == cap or (rows >= 1000 and rows % 1000 == 0))


class SparqlEndpointSource(GraphSource):
    """Reads the spec's vertex types and relations from ``source.query_url``."""

    kind: ClassVar[str] = "sparql-endpoint"
    capabilities: ClassVar[SourceCapabilities] = SourceCapabilities(
        can_resume=True, knows_schema=False, max_concurrency=2
    )

    def __init__(self, spec: PipelineSpec) -> None:
        super().__init__(spec)
        self.url = check_query_url(str(spec.source["query_url"]))
        self.rdf = resolve(spec)
        self.settings: EndpointSettings | None = None
        self.client: SparqlClient | None = None
        self.server = ServerInfo("not contacted", "")
        self.paging = str(spec.source.get("paging", "auto"))
        self.known_cap: int | None = None
        self._samples: dict[str, KeySample] = {}
        self._lock = threading.Lock()
        self._failure: GraphmillError | None = None

    def plan(self) -> list[WorkUnit]:
        return plan_units(self.spec)

    def open(self) -> None:
        self.settings = endpoint_settings(self.spec.source)
        self.client = SparqlClient(self.settings)
        self.client.open()
        self.server = self.client.probe()
        auto, self.known_cap = AUTO_PAGING[self.server.product]
        if self.settings.paging == "auto":
            self.paging = auto
        asked = str(self.spec.source.get("results_format", "auto"))
        try:
            self.settings = fit_results_format(self.settings, self.server.product, asked)
        except GraphmillError:
            self.close()
            raise
        self.client.settings = self.settings

    def close(self) -> None:
        if self.client is not None:
            self.client.close()
            self.client = None

    # ------------------------------------------------------------------ reading

    def read(self, unit: WorkUnit, cursor: str | None = None) -> Iterator[Page]:
        if self.client is None:
            raise GraphmillError("the source is not open", hint="use it in a 'with' block")
        if self._failure is not None:
            raise self._failure  # the server already failed: do not ask it again per unit
        # a staged unit goes on with the strategy it was started with (auto may differ now)
        paging = str(json.loads(cursor)["paging"]) if cursor is not None else self.paging
        reader = {"single-stream": self._read_whole, "offset": self._read_offsets}.get(
            paging, self._read_ranges
        )
        try:
            yield from reader(unit, cursor)
        except GraphmillError as exc:
            self._failure = exc
            raise

    def _select(self, unit: WorkUnit, **options: Any) -> str:
        """``unit_query``, with the text of floating-point values where the server rounds
        them (:func:`~graphmill.connectors.sparql._quirks.with_float_text`)."""
        return with_float_text(self._query(unit, **options), self.server.product, unit)

    def _query(self, unit: WorkUnit, **options: Any) -> str:
        """``unit_query``, with DISTINCT on a server whose default graph is a union of graphs
        (a triple held in two graphs would otherwise come back twice)."""
        distinct = True if self.server.product in UNION_DEFAULT_GRAPH else None
        return unit_query(self.spec, unit, distinct=distinct, **options)

    def _cap(self) -> int | None:
        """The server's result cap: the one it announced, else the one known for it."""
        announced = self.client.result_cap if self.client is not None else None
        return announced or self.known_cap

    def _where(self, unit: WorkUnit) -> str:
        return f"{self.url} ({unit.unit_id})"

    def _terms(self, unit: WorkUnit, query: str) -> pa.Table:
        assert self.client is not None
        return self.client.select_table(query, where=self._where(unit))

    def _truncated(self, unit: WorkUnit, rows: int, key_range: KeyRange | None) -> bool:
        """Whether the answer of ``rows`` rows was cut short: ask for row ``rows + 1``."""
        if not looks_capped(rows, self._cap()):
            return False
        probe = self._query(unit, key_range=key_range, limit=1, offset=rows)
        return self._terms(unit, probe).num_rows > 0

    def _page(self, unit: WorkUnit, terms: pa.Table, cursor: str) -> Page | None:
        """One page of a whole answer, mapped slice by slice (:mod:`._building`)."""
        builder = PageBuilder(self.rdf, unit)
        for piece in slices(terms, unit_variables(self.spec, unit)[0]):
            builder.add(piece)
        return builder.take(cursor)

    def _capped_error(self, unit: WorkUnit, rows: int) -> MalformedResponseError:
        return MalformedResponseError(
            f"the endpoint returned exactly {rows} rows but holds more: it caps results "
            "(e.g. Virtuoso's ResultSetMaxRows) and no smaller slice is possible",
            source=self._where(unit),
            hint="raise the server's result limit, or use paging: offset with a page_size "
            "below the cap",
        )

    def _read_whole(self, unit: WorkUnit, cursor: str | None) -> Iterator[Page]:
        """single-stream: one unpaged SELECT per unit, cut into pages as it streams."""
        assert self.client is not None
        reader = StreamReader(
            self.client,
            self._select(unit),
            unit_variables(self.spec, unit),
            page_rows=self._page_rows(),
            where=self._where(unit),
            truncated=lambda rows: self._truncated(unit, rows, None),
        )
        builder = PageBuilder(self.rdf, unit)
        for terms, state in reader.pages(StreamCursor.decode(cursor)):
            builder.add(terms)
            page = builder.take(state.encode()) if state is not None else None
            if page is not None:
                yield page

    def _read_offsets(self, unit: WorkUnit, cursor: str | None) -> Iterator[Page]:
        """offset: ORDER BY + LIMIT/OFFSET pages, cut at a vertex boundary."""
        state: dict[str, Any] = json.loads(cursor) if cursor else {"offset": 0, "limit": None}
        if state.get("finished"):
            return
        offset = int(state["offset"])
        limit = int(state["limit"]) if state.get("limit") else self._page_rows()
        first = unit_variables(self.spec, unit)[0]
        while True:
            query = self._select(unit, ordered=True, limit=limit, offset=offset)
            terms = self._terms(unit, query)
            rows = terms.num_rows
            if 0 < rows < limit and self._truncated_at(unit, offset, rows):
                limit = rows  # the server's cap: page by it from now on
            finished = rows < limit
            if rows == limit and unit.table == "vertices":
                # a vertex's values share a page (fewer repeats for the snapshot to drop)
                keys = terms.column(first).combine_chunks()
                keep = pc.not_equal(keys, keys[rows - 1])
                if pc.any(keep).as_py():
                    terms = terms.filter(keep)
            offset += terms.num_rows
            state = {"paging": "offset", "offset": offset, "limit": limit, "finished": finished}
            page = self._page(unit, terms, json.dumps(state, sort_keys=True))
            if page is not None:
                yield page
            if finished:
                return

    def _truncated_at(self, unit: WorkUnit, offset: int, rows: int) -> bool:
        if not looks_capped(rows, self._cap()):
            return False
        probe = self._query(unit, ordered=True, limit=1, offset=offset + rows)
        return self._terms(unit, probe).num_rows > 0

    def _page_rows(self) -> int:
        assert self.settings is not None
        return self.settings.page_size

    def _sample(self, vertex_type: str) -> KeySample:
        """The member key sample of ``vertex_type``, taken once per source."""
        with self._lock:
            if vertex_type not in self._samples:
                assert self.client is not None
                members = WorkUnit("vertices", vertex_type)
                sink = self.client.select(
                    self._query(members),
                    lambda: KeySampler(VERTEX),
                    where=self._where(members),
                )
                assert isinstance(sink, KeySampler)
                sample = sink.sample()
                if self._truncated(members, sample.members, None):
                    sample = replace(sample, complete=False)  # cut by a result cap
                self._samples[vertex_type] = sample
            return self._samples[vertex_type]

    def _resampled(self, owner: str, planner: RangePlanner, key_range: KeyRange) -> KeyRange | None:
        """Sample the members inside ``key_range`` (the first sample came from an answer the
        server cut short, so it may hold no bound there); the narrower range that allows."""
        if key_range.blank_nodes:
            return None
        assert self.client is not None
        members = WorkUnit("vertices", owner)
        sink = self.client.select(
            self._query(members, key_range=key_range),
            lambda: KeySampler(VERTEX),
            where=self._where(members),
        )
        assert isinstance(sink, KeySampler)
        finer = sink.sample()
        planner.refine(finer)
        with self._lock:
            self._samples[owner] = self._samples[owner].merged(finer)
        return planner.narrower(key_range)

    def _read_ranges(self, unit: WorkUnit, cursor: str | None) -> Iterator[Page]:
        """key-range: one SELECT per slice of subjects, one page per slice."""
        state = RangeCursor.decode(cursor)
        if state.finished:
            return
        if state.row_cap is None:
            state.row_cap = self._cap()
        owner = unit.name if unit.table == "vertices" else unit.relation.source_type
        planner = RangePlanner(self._sample(owner), self._page_rows())
        if planner.whole_unit_fits(state):
            terms = self._terms(unit, self._select(unit))
            if not self._truncated(unit, terms.num_rows, None):
                state.finished = True
                page = self._page(unit, terms, state.encode())
                if page is not None:
                    yield page
                return
            state.row_cap = terms.num_rows
        while not state.finished:
            key_range, members = planner.next_range(state)
            terms = self._terms(unit, self._select(unit, key_range=key_range))
            while self._truncated(unit, terms.num_rows, key_range):
                state.row_cap = terms.num_rows
                smaller = planner.narrower(key_range) or self._resampled(owner, planner, key_range)
                if smaller is None:
                    raise self._capped_error(unit, terms.num_rows)
                key_range, members = smaller, members / 2
                terms = self._terms(unit, self._select(unit, key_range=key_range))
            state.advance(key_range, terms.num_rows, members)
            page = self._page(unit, terms, state.encode())
            if page is not None:
                yield page

    # ------------------------------------------------------------------ fingerprints

    def fingerprint(self, unit: WorkUnit) -> dict[str, Any]:
        """The unit's row count and digests of its smallest and largest subject IRI, from
        one aggregate query (:func:`fingerprint_query`). A changed value alone, with the
        same rows and ends, is not seen."""
        if self._failure is not None:
            raise self._failure  # the server already failed: do not ask it again per unit
        try:
            terms = self._terms(unit, fingerprint_query(self.spec, unit))
        except GraphmillError as exc:
            self._failure = exc
            raise
        row = terms.slice(0, 1).to_pylist()[0] if terms.num_rows else {}
        ends = [row.get(k) for k in ("lo", "hi")]
        return {
            "count": int(row.get("n") or 0),
            "first": key_digest(ends[0]) if ends[0] is not None else None,
            "last": key_digest(ends[1]) if ends[1] is not None else None,
        }

    def property_keys(self, unit: WorkUnit) -> list[str] | None:
        """Predicates of the vertex type's subjects, one DISTINCT query (RDF edges carry
        no properties)."""
        if unit.table != "vertices":
            return None
        terms = self._terms(unit, keys_query(self.spec, unit.name))
        return sorted(terms.column("p").drop_null().to_pylist())

    # ------------------------------------------------------------------ describing

    def provenance(self) -> Provenance:
        details: dict[str, Any] = {"server": self.server.product, "paging": self.paging}
        if self.settings is not None:
            details.update(self.settings.describe())
            details["paging"] = self.paging
        if self.paging == "key-range":
            details["key_range_filter"] = (
                "each page adds FILTER(isIRI(?k) && STR(?k) >= low && STR(?k) < high) on the "
                "unit's first variable, or FILTER(isBlank(?k)) for blank-node subjects"
            )
        return Provenance(
            kind=self.kind,
            location=self.url,
            queries=[self._query(u) for u in self.plan()],
            details=details,
        )
