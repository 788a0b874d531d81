"""``rdf-file``: RDF dumps streamed through pyoxigraph's parser, units answered with DuckDB.

On :meth:`~RdfFileSource.open` each file is parsed once as a stream and the quads the spec
can use are staged as Parquet parts (:mod:`._staging`, literals in Oxigraph's canonical form
so that this source and ``rdf-store`` give byte-identical snapshots); the units are then
joins and group-bys over those parts (:class:`._facts.FactParts`). The parts and DuckDB's
database live in a temporary folder beside the snapshot, removed on :meth:`close`. Memory
stays bounded whatever the size of the dump; measured in ``bench/bench_rdf.py``.
"""

from __future__ import annotations

import shutil
import tempfile
from collections.abc import Iterator
from pathlib import Path
from typing import Any, ClassVar

from graphmill.connectors._fingerprints import FileFingerprints
from graphmill.connectors.base import GraphSource, Page, Provenance, SourceCapabilities, WorkUnit
from graphmill.connectors.rdf._facts import FactParts
from graphmill.connectors.rdf._files import file_details, spec_inputs
from graphmill.connectors.rdf._mapping import DEFAULT_PAGE_ROWS, unit_pages
from graphmill.connectors.rdf._plan import plan_units, resolve
from graphmill.connectors.rdf._reading import ReadingReport
from graphmill.connectors.rdf._staging import empty_parts, stage_stream, wanted_predicates
from graphmill.errors import GraphmillError
from graphmill.spec import PipelineSpec


def work_folder(spec: PipelineSpec, purpose: str) -> Path:
    """A new temporary folder beside the snapshot (the system's if that folder is missing)."""
    parent = Path(spec.output.snapshot).parent
    where = str(parent) if parent.is_dir() else None
    return Path(tempfile.mkdtemp(prefix=f".graphmill-{purpose}-", dir=where))


def fact_pages(facts: FactParts, unit: WorkUnit, page_rows: int) -> Iterator[Page]:
    """The pages of ``unit`` answered from staged parts (under ``reject``, a member with
    another declared class raises the InputError naming it before any page)."""
    rdf = facts.plan
    rejects = rdf.several_types == "reject" and bool(rdf.other_classes(unit.name))
    if unit.table == "vertices" and unit.facet is None and rejects:
        clashes = facts.clashes(unit.name)
        if clashes.num_rows:
            list(unit_pages(rdf, unit, clashes))
    present, batches = facts.unit_answer(unit)
    for terms in batches:
        yield from unit_pages(rdf, unit, terms, page_rows=page_rows, present=present)


class RdfFileSource(GraphSource):
    """Stages ``source.paths`` on :meth:`open` and answers units from the parts."""

    kind: ClassVar[str] = "rdf-file"
    capabilities: ClassVar[SourceCapabilities] = SourceCapabilities()

    def __init__(self, spec: PipelineSpec, *, page_rows: int = DEFAULT_PAGE_ROWS) -> None:
        super().__init__(spec)
        self.page_rows = page_rows
        self.rdf = resolve(spec)
        self._facts: FactParts | None = None
        self._folder: Path | None = None
        self.quads_kept = 0
        self._prints = FileFingerprints()  # sha256 of each dump, taken while staging it

    def plan(self) -> list[WorkUnit]:
        return plan_units(self.spec)

    def open(self) -> None:
        inputs = spec_inputs(self.spec)
        self._folder = folder = work_folder(self.spec, "rdf-file")
        try:
            parts = empty_parts(folder)
            predicates = wanted_predicates(self.rdf)
            self.quads_kept = 0
            for i, item in enumerate(inputs):
                report = ReadingReport(self.progress, item)
                self.quads_kept += stage_stream(
                    item, self.rdf, predicates, folder, f"in{i:04d}", report=report,
                    prints=self._prints,
                )  # fmt: skip
            self._facts = FactParts(parts, self.rdf, folder, units=self.plan())
        except BaseException:
            self.close()
            raise

    def close(self) -> None:
        if self._facts is not None:
            self._facts.close()
            self._facts = None
        if self._folder is not None:
            shutil.rmtree(self._folder, ignore_errors=True)
            self._folder = None

    def read(self, unit: WorkUnit, cursor: str | None = None) -> Iterator[Page]:
        if self._facts is None:
            raise GraphmillError("the source is not open", hint="use it in a 'with' block")
        yield from fact_pages(self._facts, unit, self.page_rows)

    def fingerprint(self, unit: WorkUnit) -> dict[str, Any]:
        """Size, modification time and sha256 of every dump (each unit reads them all)."""
        return self._prints.of_files((i.path, i.shown) for i in spec_inputs(self.spec))

    def property_keys(self, unit: WorkUnit) -> list[str] | None:
        """Predicates of the vertex type's subjects: the dumps are read once more, keeping
        only subjects and predicates (asked only when a declared property had no value)."""
        if unit.table != "vertices":
            return None
        from graphmill.connectors.rdf._keys import predicates_of

        return predicates_of(self.spec, self.rdf, unit.name)

    def provenance(self) -> Provenance:
        inputs = spec_inputs(self.spec)
        files = file_details(inputs, self._prints)
        details: dict[str, Any] = {"files": files, "quads_used": self.quads_kept}
        return Provenance(
            kind=self.kind, location=", ".join(i.shown for i in inputs), details=details
        )
