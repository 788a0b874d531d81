"""``rdf-file``: RDF dumps streamed through pyoxigraph's parser, units answered with Arrow.

Each file is parsed in chunks (Rust-side: the parser's quads go straight into pyoxigraph's
canonical N-Quads writer), read into term columns (:func:`._terms.read_nquads`), and only the
quads the spec can use are kept. Literals of XSD datatypes are then put in the canonical form
Oxigraph's store gives them (one tiny store holding each distinct literal once), so this
source and ``rdf-store`` see the same terms and give byte-identical snapshots. The units are
answered by :class:`._facts.FactTable`. Memory: the kept quads only; measured in
``bench/bench_rdf.py``.
"""

from __future__ import annotations

import itertools
from collections.abc import Iterator
from typing import Any, ClassVar

import pyarrow as pa
import pyarrow.compute as pc

from graphmill.connectors._fingerprints import FileFingerprints
from graphmill.connectors.base import GraphSource, Page, Provenance, SourceCapabilities, WorkUnit
from graphmill.connectors.rdf._facts import FactTable, wanted_predicates
from graphmill.connectors.rdf._files import (
    RdfInput,
    file_details,
    oxigraph,
    quads,
    reading,
    spec_inputs,
)
from graphmill.connectors.rdf._mapping import DEFAULT_PAGE_ROWS, unit_pages
from graphmill.connectors.rdf._plan import plan_units, resolve
from graphmill.connectors.rdf._terms import read_nquads, read_tsv_results
from graphmill.connectors.rdf._xsd import XSD, XSD_STRING
from graphmill.errors import GraphmillError
from graphmill.spec import PipelineSpec

CHUNK_QUADS = 250_000
_PROBE = "urn:graphmill:literal"


def read_file_quads(item: RdfInput, predicates: list[str], chunk: int = CHUNK_QUADS) -> pa.Table:
    """The quads of ``item`` whose predicate is in ``predicates``, as term columns."""
    ox = oxigraph()
    wanted = pa.array(predicates, pa.string())
    tables = []
    with quads(item) as parser, reading(item):
        while block := ox.serialize(itertools.islice(parser, chunk), format=ox.RdfFormat.N_QUADS):
            tables.append(read_nquads(block, predicates=wanted))
    if not tables:
        return read_nquads(b"", predicates=wanted)
    return pa.concat_tables(tables)


def _escape_lexical(text: pa.Array) -> pa.Array:
    for raw, escaped in (("\\", "\\\\"), ('"', '\\"'), ("\n", "\\n"), ("\r", "\\r")):
        text = pc.replace_substring(text, pattern=raw, replacement=escaped)
    return text


def canonical_literals(table: pa.Table) -> pa.Table:
    """Replace XSD-typed literal objects by the form Oxigraph's store keeps them in.

    Oxigraph stores values, not lexical forms, for the XSD types it knows (``"01"`` becomes
    ``"1"``, ``xsd:int`` becomes ``xsd:integer``, ``"1e3"`` becomes ``"1000"``); doing the same
    here makes ``rdf-file`` agree with ``rdf-store`` term for term.
    """
    dtype = table.column("o_datatype").combine_chunks()
    typed = pc.fill_null(
        pc.and_(pc.starts_with(dtype, XSD), pc.not_equal(dtype, XSD_STRING)), False
    )
    if not pc.any(typed).as_py():
        return table
    lexical = table.column("o").combine_chunks()
    keys = pc.binary_join_element_wise(dtype, lexical, " ")
    distinct = pc.unique(keys.filter(typed))
    parts = pc.split_pattern(distinct, pattern=" ", max_splits=1)
    numbers = pc.cast(pa.array(range(len(distinct)), pa.int64()), pa.string())
    lines = pc.binary_join_element_wise(
        f"<{_PROBE}/", numbers, f"> <{_PROBE}> \"",
        _escape_lexical(pc.list_element(parts, 1)), '"^^<', pc.list_element(parts, 0), "> .\n", "",
    )  # fmt: skip
    ox = oxigraph()
    store = ox.Store()
    document = pc.binary_join(pa.ListArray.from_arrays([0, len(lines)], lines), "")[0].as_py()
    store.load(document.encode(), format=ox.RdfFormat.N_TRIPLES)
    answer = store.query(f"SELECT ?n ?o WHERE {{ ?n <{_PROBE}> ?o }}")
    found = read_tsv_results(
        answer.serialize(format=ox.QueryResultsFormat.TSV), where="canonical literals"
    )
    order = pc.cast(pc.utf8_slice_codeunits(found.column("n"), len(_PROBE) + 1), pa.int64())
    position = pc.index_in(keys, value_set=distinct)
    lookup = pc.take(pa.array(range(len(found)), pa.int64()).take(pc.sort_indices(order)), position)
    columns = {}
    for name in ("o", "o_datatype"):
        canonical = found.column(name).combine_chunks().take(lookup)
        columns[name] = pc.if_else(typed, canonical, table.column(name).combine_chunks())
    for name, values in columns.items():
        table = table.set_column(table.schema.get_field_index(name), name, values)
    return table


class RdfFileSource(GraphSource):
    """Reads ``source.paths`` on :meth:`open` into a :class:`FactTable`."""

    kind: ClassVar[str] = "rdf-file"
    capabilities: ClassVar[SourceCapabilities] = SourceCapabilities()

    def __init__(self, spec: PipelineSpec, *, page_rows: int = DEFAULT_PAGE_ROWS) -> None:
        super().__init__(spec)
        self.page_rows = page_rows
        self.rdf = resolve(spec)
        self._facts: FactTable | None = None
        self.quads_kept = 0

    def plan(self) -> list[WorkUnit]:
        return plan_units(self.spec)

    def open(self) -> None:
        predicates = wanted_predicates(self.rdf)
        tables = [read_file_quads(item, predicates) for item in spec_inputs(self.spec)]
        table = canonical_literals(pa.concat_tables(tables))
        self.quads_kept = table.num_rows
        self._facts = FactTable(table, self.rdf)

    def close(self) -> None:
        self._facts = None

    def read(self, unit: WorkUnit, cursor: str | None = None) -> Iterator[Page]:
        if self._facts is None:
            raise GraphmillError("the source is not open", hint="use it in a 'with' block")
        terms = self._facts.unit_terms(unit)
        yield from unit_pages(self.rdf, unit, terms, page_rows=self.page_rows)

    def fingerprint(self, unit: WorkUnit) -> dict[str, Any]:
        """Size, modification time and sha256 of every dump (each unit reads them all)."""
        prints = self.__dict__.setdefault("_prints", FileFingerprints())
        return prints.of_files((i.path, i.shown) for i in spec_inputs(self.spec))

    def property_keys(self, unit: WorkUnit) -> list[str] | None:
        """Predicates of the vertex type's subjects: the dumps are read once more, keeping
        only subjects and predicates (asked only when a declared property had no value)."""
        if unit.table != "vertices":
            return None
        from graphmill.connectors.rdf._keys import predicates_of

        return predicates_of(self.spec, self.rdf, unit.name)

    def provenance(self) -> Provenance:
        inputs = spec_inputs(self.spec)
        details: dict[str, Any] = {"files": file_details(inputs), "quads_used": self.quads_kept}
        return Provenance(
            kind=self.kind, location=", ".join(i.shown for i in inputs), details=details
        )
