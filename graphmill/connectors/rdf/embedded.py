"""``rdf-store``: the files loaded into an in-memory Oxigraph store, each unit one SPARQL SELECT.

The queries are those of :mod:`._queries` (the ones a remote endpoint is sent); answers are
serialized by the store as SPARQL TSV and read back with :mod:`._terms`, in bulk.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any, ClassVar

from graphmill.connectors._fingerprints import FileFingerprints
from graphmill.connectors.base import GraphSource, Page, Provenance, SourceCapabilities, WorkUnit
from graphmill.connectors.rdf._files import file_details, oxigraph, quads, spec_inputs
from graphmill.connectors.rdf._mapping import DEFAULT_PAGE_ROWS, unit_pages
from graphmill.connectors.rdf._plan import plan_units, resolve
from graphmill.connectors.rdf._queries import keys_query, unit_query
from graphmill.connectors.rdf._terms import read_tsv_results
from graphmill.errors import GraphmillError, SourceServerError
from graphmill.spec import PipelineSpec


class EmbeddedStoreSource(GraphSource):
    """Loads ``source.paths`` into a pyoxigraph ``Store`` on :meth:`open` and queries it."""

    kind: ClassVar[str] = "rdf-store"
    capabilities: ClassVar[SourceCapabilities] = SourceCapabilities()

    def __init__(self, spec: PipelineSpec, *, page_rows: int = DEFAULT_PAGE_ROWS) -> None:
        super().__init__(spec)
        self.page_rows = page_rows
        self.rdf = resolve(spec)
        self._store: Any = None
        self.quads_loaded = 0

    def plan(self) -> list[WorkUnit]:
        return plan_units(self.spec)

    def open(self) -> None:
        ox = oxigraph()
        store = ox.Store()
        for item in spec_inputs(self.spec):
            with quads(item) as parser:
                # bulk_extend keeps blank node labels as written; bulk_load would rename them.
                store.bulk_extend(parser)
        self._store = store
        self.quads_loaded = len(store)

    def close(self) -> None:
        self._store = None

    def query_terms(self, unit: WorkUnit) -> Any:
        """The unit's SELECT answered by the store, as a term table."""
        if self._store is None:
            raise GraphmillError("the source is not open", hint="use it in a 'with' block")
        ox = oxigraph()
        text = unit_query(self.spec, unit)
        try:
            data = self._store.query(text).serialize(format=ox.QueryResultsFormat.TSV)
        except (SyntaxError, OSError) as exc:
            raise SourceServerError(
                f"the embedded store refused a query: {exc}", source=self.kind
            ) from exc
        return read_tsv_results(data, where=f"{self.kind} {unit.unit_id}")

    def property_keys(self, unit: WorkUnit) -> list[str] | None:
        """Predicates of the vertex type's subjects (RDF edges carry no properties)."""
        if unit.table != "vertices" or self._store is None:
            return None
        ox = oxigraph()
        data = self._store.query(keys_query(self.spec, unit.name))
        terms = read_tsv_results(data.serialize(format=ox.QueryResultsFormat.TSV), where="keys")
        return sorted(terms.column("p").drop_null().to_pylist())

    def read(self, unit: WorkUnit, cursor: str | None = None) -> Iterator[Page]:
        yield from unit_pages(self.rdf, unit, self.query_terms(unit), page_rows=self.page_rows)

    def fingerprint(self, unit: WorkUnit) -> dict[str, Any]:
        """Size, modification time and sha256 of every dump (each unit reads them all)."""
        prints = self.__dict__.setdefault("_prints", FileFingerprints())
        return prints.of_files((i.path, i.shown) for i in spec_inputs(self.spec))

    def provenance(self) -> Provenance:
        inputs = spec_inputs(self.spec)
        return Provenance(
            kind=self.kind,
            location=", ".join(i.shown for i in inputs),
            queries=[unit_query(self.spec, u) for u in self.plan()],
            details={"files": file_details(inputs), "quads": self.quads_loaded},
        )
