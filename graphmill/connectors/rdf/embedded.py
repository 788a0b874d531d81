"""``rdf-store``: the files loaded into an embedded Oxigraph store, each unit one SPARQL SELECT.

The queries are those of :mod:`._queries` (the ones a remote endpoint is sent); answers are
serialized by the store as SPARQL TSV and read back with :mod:`._terms`, in bulk.

Small dumps are loaded into an in-memory store. From :data:`DISK_FROM` bytes of input, or
whenever ``source.store_folder`` is set, the store lives on disk (:mod:`._disk_store`):
``store_folder`` is kept and reused by later runs while the inputs are unchanged, otherwise a
temporary folder beside the snapshot is used and removed on :meth:`close`. On disk, each
answer is written to a TSV file and read back in blocks, and property facets are sorted by
subject with DuckDB (:class:`._facts.FacetSorter`), so memory does not grow with the dump.
"""

from __future__ import annotations

import shutil
from collections.abc import Iterator
from pathlib import Path
from typing import Any, ClassVar

import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from graphmill.connectors._fingerprints import FileFingerprints
from graphmill.connectors.base import GraphSource, Page, Provenance, SourceCapabilities, WorkUnit
from graphmill.connectors.rdf._disk_store import open_disk_store
from graphmill.connectors.rdf._facts import FacetSorter
from graphmill.connectors.rdf._files import file_details, oxigraph, quads, spec_inputs
from graphmill.connectors.rdf._mapping import DEFAULT_PAGE_ROWS, unit_pages
from graphmill.connectors.rdf._plan import plan_units, resolve
from graphmill.connectors.rdf._queries import CLASH, keys_query, unit_query
from graphmill.connectors.rdf._reading import ReadingReport, quad_blocks
from graphmill.connectors.rdf._terms import read_tsv_file, read_tsv_results
from graphmill.connectors.rdf.dump import work_folder
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
        self._folder: Path | None = None  # scratch: answers, sorting, a temporary store
        self._sorter: FacetSorter | None = None
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
            self._sorter = FacetSorter(self._folder, self.rdf.languages)
        except BaseException:
            self.close()
            raise

    def close(self) -> None:
        if self._sorter is not None:
            self._sorter.close()
            self._sorter = None
        self._store = None
        if self._folder is not None:
            shutil.rmtree(self._folder, ignore_errors=True)
            self._folder = None

    def _query(self, unit: WorkUnit, output: str | None = None) -> Any:
        if self._store is None:
            raise GraphmillError("the source is not open", hint="use it in a 'with' block")
        ox = oxigraph()
        text = unit_query(self.spec, unit)
        try:
            return self._store.query(text).serialize(output, format=ox.QueryResultsFormat.TSV)
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
        present, batches = self._answer_batches(unit)
        clashes = []  # under reject: raised once the whole answer is seen (smallest subject)
        for terms in batches:
            if CLASH in terms.column_names:
                found = pc.is_valid(terms.column(CLASH))
                clashes.append(terms.filter(found))
                terms = terms.filter(pc.invert(found))
            yield from unit_pages(self.rdf, unit, terms, page_rows=self.page_rows, present=present)
        if any(t.num_rows for t in clashes):
            list(unit_pages(self.rdf, unit, pa.concat_tables(clashes)))

    def _answer_batches(self, unit: WorkUnit) -> tuple[set[str] | None, Iterator[Any]]:
        """The unit's answer streamed through a TSV file; facets sorted by subject."""
        assert self._folder is not None and self._sorter is not None
        answer = self._folder / "answer.tsv"
        self._query(unit, str(answer))
        batches = read_tsv_file(str(answer), where=f"{self.kind} {unit.unit_id}")
        facet = unit.facet is not None and unit.facet != self.rdf.graph_property
        if not facet:
            return None, batches
        parts = self._folder / "facet"
        shutil.rmtree(parts, ignore_errors=True)
        parts.mkdir()
        count = 0
        for count, terms in enumerate(batches, start=1):
            pq.write_table(terms, parts / f"{count:07d}.parquet", compression="lz4")
        if not count:
            return None, iter(())
        return self._sorter.sorted_facet(str(parts / "*.parquet"))

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
