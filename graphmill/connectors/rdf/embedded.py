"""``rdf-store``: the files loaded into an embedded Oxigraph store, each unit one SPARQL SELECT.

The queries are those of :mod:`._queries` (the ones a remote endpoint is sent); answers are
serialized by the store as SPARQL TSV and read back with :mod:`._terms`, in bulk.

Small dumps are loaded into an in-memory store. From :data:`DISK_FROM` bytes of input, or
whenever ``source.store_folder`` is set, the store lives on disk (:mod:`._disk_store`):
``store_folder`` is kept and reused by later runs while the inputs are unchanged, otherwise a
temporary folder beside the snapshot is used and removed on :meth:`close`. On disk the SELECTs
are not run (Oxigraph evaluates their joins in memory that grows with the store): the quads
of the wanted predicates are read by index scans and staged, and the units answered with
``rdf-file``'s DuckDB joins (:func:`._disk_store.stage_store`, :class:`._facts.FactParts`),
so memory does not grow with the dump.
"""

from __future__ import annotations

import shutil
from collections.abc import Iterator
from pathlib import Path
from typing import Any, ClassVar

from graphmill.connectors._fingerprints import FileFingerprints
from graphmill.connectors.base import GraphSource, Page, Provenance, SourceCapabilities, WorkUnit
from graphmill.connectors.rdf._disk_store import open_disk_store, stage_store
from graphmill.connectors.rdf._facts import FactParts
from graphmill.connectors.rdf._files import file_details, oxigraph, quads, spec_inputs
from graphmill.connectors.rdf._mapping import DEFAULT_PAGE_ROWS, unit_pages
from graphmill.connectors.rdf._plan import plan_units, resolve
from graphmill.connectors.rdf._queries import keys_query, unit_query
from graphmill.connectors.rdf._reading import ReadingReport, quad_blocks
from graphmill.connectors.rdf._staging import empty_parts
from graphmill.connectors.rdf._terms import read_tsv_results
from graphmill.connectors.rdf.dump import fact_pages, work_folder
from graphmill.errors import GraphmillError, SourceServerError
from graphmill.spec import PipelineSpec

DISK_FROM = 256 << 20  # bytes of input files from which the store is kept on disk


class EmbeddedStoreSource(GraphSource):
    """Loads ``source.paths`` into a pyoxigraph ``Store`` on :meth:`open` and queries it."""

    kind: ClassVar[str] = "rdf-store"
    capabilities: ClassVar[SourceCapabilities] = SourceCapabilities()

    def __init__(self, spec: PipelineSpec, *, page_rows: int = DEFAULT_PAGE_ROWS) -> None:
        super().__init__(spec)
        self.page_rows = page_rows
        self.rdf = resolve(spec)
        self._store: Any = None
        self._folder: Path | None = None  # scratch: staged parts, DuckDB, a temporary store
        self._facts: FactParts | None = None
        self.quads_loaded = 0
        self.on_disk = False

    def plan(self) -> list[WorkUnit]:
        return plan_units(self.spec)

    def open(self) -> None:
        inputs = spec_inputs(self.spec)
        named = self.spec.source.get("store_folder")
        self.on_disk = named is not None or sum(i.path.stat().st_size for i in inputs) >= DISK_FROM
        if not self.on_disk:
            store = oxigraph().Store()
            for item in inputs:
                report = ReadingReport(self.progress, item, verb="load")
                with quads(item, position=report.position) as parser:
                    # bulk_extend keeps blank node labels as written; bulk_load renames them.
                    for block in quad_blocks(parser, report):
                        store.bulk_extend(block)
            self._store = store
            self.quads_loaded = len(store)
            return
        self._folder = work_folder(self.spec, "rdf-store")
        try:
            location = self.spec.resolve_path(named) if named else self._folder / "store"
            self._store = open_disk_store(
                location, inputs, shown=named or "", progress=self.progress
            )
            self.quads_loaded = len(self._store)
            parts = empty_parts(self._folder / "parts")
            stage_store(self._store, self.rdf, self._folder / "parts")
            self._facts = FactParts(parts, self.rdf, self._folder, units=self.plan())
        except BaseException:
            self.close()
            raise

    def close(self) -> None:
        if self._facts is not None:
            self._facts.close()
            self._facts = None
        self._store = None
        if self._folder is not None:
            shutil.rmtree(self._folder, ignore_errors=True)
            self._folder = None

    def _query(self, unit: WorkUnit) -> Any:
        if self._store is None:
            raise GraphmillError("the source is not open", hint="use it in a 'with' block")
        ox = oxigraph()
        text = unit_query(self.spec, unit)
        try:
            return self._store.query(text).serialize(format=ox.QueryResultsFormat.TSV)
        except (SyntaxError, OSError) as exc:
            raise SourceServerError(
                f"the embedded store refused a query: {exc}", source=self.kind
            ) from exc

    def query_terms(self, unit: WorkUnit) -> Any:
        """The unit's SELECT answered by the store, as a term table."""
        return read_tsv_results(self._query(unit), where=f"{self.kind} {unit.unit_id}")

    def property_keys(self, unit: WorkUnit) -> list[str] | None:
        """Predicates of the vertex type's subjects (RDF edges carry no properties)."""
        if unit.table != "vertices" or self._store is None:
            return None
        ox = oxigraph()
        data = self._store.query(keys_query(self.spec, unit.name))
        terms = read_tsv_results(data.serialize(format=ox.QueryResultsFormat.TSV), where="keys")
        return sorted(terms.column("p").drop_null().to_pylist())

    def read(self, unit: WorkUnit, cursor: str | None = None) -> Iterator[Page]:
        if not self.on_disk:
            yield from unit_pages(self.rdf, unit, self.query_terms(unit), page_rows=self.page_rows)
            return
        if self._facts is None:
            raise GraphmillError("the source is not open", hint="use it in a 'with' block")
        yield from fact_pages(self._facts, unit, self.page_rows)

    def fingerprint(self, unit: WorkUnit) -> dict[str, Any]:
        """Size, modification time and sha256 of every dump (each unit reads them all)."""
        prints = self.__dict__.setdefault("_prints", FileFingerprints())
        return prints.of_files((i.path, i.shown) for i in spec_inputs(self.spec))

    def provenance(self) -> Provenance:
        inputs = spec_inputs(self.spec)
        details: dict[str, Any] = {"files": file_details(inputs), "quads": self.quads_loaded}
        if self.on_disk:
            details["answered_by"] = "index scans per predicate, then DuckDB joins"
        return Provenance(
            kind=self.kind,
            location=", ".join(i.shown for i in inputs),
            queries=[] if self.on_disk else [unit_query(self.spec, u) for u in self.plan()],
            details=details,
        )
