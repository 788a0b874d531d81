"""Unit answers computed with DuckDB from staged parts (the ``rdf-file`` engine).

:class:`FactParts` reads the parts of :mod:`._staging` (``types``, ``literals``, ``links``)
and answers each work unit with the same term table the unit's SPARQL query gives on a
store holding those quads -- an independent implementation of the semantics in
:mod:`._queries`, so the two sources can be checked against each other. The subject-to-type
resolution, property grouping and relation extraction are joins and group-bys in a DuckDB
database file under ``memory_limit``, spilling to its folder, so memory does not grow with
the dump. Answers come as batches; a property facet's batches are cut between subjects, so a
batch holds every value of its subjects.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pyarrow as pa
import pyarrow.compute as pc

from graphmill.connectors.base import WorkUnit
from graphmill.connectors.rdf._mapping import language_mask, present_kinds
from graphmill.connectors.rdf._plan import RdfPlan
from graphmill.connectors.rdf._queries import CLASH, SOURCE, TARGET, VALUE, VERTEX
from graphmill.errors import require

MEMORY_LIMIT = "1GiB"
THREADS = 2
BATCH_ROWS = 100_000
_PROBE_ROWS = 10_000
_TEXT = pa.string()


def _texts(table: pa.Table) -> pa.Table:
    """``table`` with every column as ``string`` (DuckDB may hand out views)."""
    return table.cast(pa.schema([(name, _TEXT) for name in table.column_names]))


class FacetSorter:
    """A DuckDB connection under ``memory_limit`` that spills into ``folder``; sorts property
    facets by subject (:meth:`sorted_facet`) for answers read in batches."""

    def __init__(
        self,
        folder: Path,
        languages: tuple[str, ...] | None,
        *,
        memory_limit: str = MEMORY_LIMIT,
        threads: int = THREADS,
    ) -> None:
        duckdb = require("duckdb", "rdf")
        self.languages = languages
        config = {
            "memory_limit": memory_limit,
            "threads": threads,
            "temp_directory": str(folder / "spill"),
            "preserve_insertion_order": False,
        }
        self.con: Any = duckdb.connect(":memory:", config=config)

    def close(self) -> None:
        self.con.close()

    def sorted_facet(self, parts: str) -> tuple[set[str], Iterator[pa.Table]]:
        """A facet's term tables (Parquet files ``parts``, a glob) as :meth:`FactParts.
        unit_answer` gives them: the kinds of the whole facet, then whole-subject batches."""
        self.con.execute("CREATE OR REPLACE TABLE facet AS SELECT * FROM read_parquet(?)", [parts])
        return self._facet_kinds(), self._facet_rows()

    def _rows(self, query: str, params: list[Any], rows: int | None = None) -> Iterator[pa.Table]:
        reader = self.con.sql(query, params=params).to_arrow_reader(rows or BATCH_ROWS)
        for batch in reader:
            if batch.num_rows:
                yield _texts(pa.Table.from_batches([batch]))

    def _facet_rows(self) -> Iterator[pa.Table]:
        try:
            rows = self._rows(f"SELECT * FROM facet ORDER BY {VERTEX}", [])
            yield from _whole_subjects(self._kept(rows))
        finally:
            self.con.execute("DROP TABLE IF EXISTS facet")

    def _kept(self, batches: Iterator[pa.Table]) -> Iterator[pa.Table]:
        for batch in batches:
            keep = language_mask(
                batch.column(VALUE + "_lang").combine_chunks(),
                batch.column(VALUE + "_datatype").combine_chunks(),
                self.languages,
            )
            yield batch.filter(keep)

    def _facet_kinds(self) -> set[str]:
        """The value kinds of the current facet (one well-typed, kept literal suffices)."""
        found: set[str] = set()
        datatypes = self.con.sql(f"SELECT DISTINCT {VALUE}_datatype FROM facet").fetchall()
        for (datatype,) in datatypes:
            query = f"SELECT * FROM facet WHERE {VALUE}_datatype = ?"
            for batch in self._kept(self._rows(query, [datatype], _PROBE_ROWS)):
                kinds = present_kinds(batch.column(VALUE), batch.column(VALUE + "_datatype"))
                if kinds:
                    found |= kinds
                    break
        return found


class FactParts(FacetSorter):
    """DuckDB over the staged parts of one plan; :meth:`unit_answer` answers a unit."""

    def __init__(self, parts: dict[str, Path], plan: RdfPlan, folder: Path) -> None:
        super().__init__(folder, plan.languages)
        self.plan = plan
        for role, path in parts.items():
            self.con.read_parquet(str(path)).create_view(role)
        self._members: dict[str, str] = {}

    def members(self, vertex_type: str) -> str:
        """The name of a table of the subjects of ``vertex_type`` (column ``s``), made once."""
        if vertex_type not in self._members:
            name = f"members_{len(self._members)}"
            plan = self.plan
            earlier = list(plan.earlier_classes(vertex_type))
            if plan.several_types != "first-declared":
                earlier = []
            self.con.execute(
                f"CREATE TABLE {name} AS SELECT DISTINCT s FROM types WHERE o = ? "
                "AND s NOT IN (SELECT s FROM types WHERE list_contains(?::VARCHAR[], o))",
                [plan.classes[vertex_type], earlier],
            )
            self._members[vertex_type] = name
        return self._members[vertex_type]

    def clashes(self, vertex_type: str) -> pa.Table:
        """Under ``reject``: (vertex, clash) for members with another declared class."""
        others = list(self.plan.other_classes(vertex_type))
        query = (
            f"SELECT DISTINCT t.s AS {VERTEX}, t.o AS {CLASH} FROM types t "
            f"JOIN {self.members(vertex_type)} m ON t.s = m.s "
            "WHERE list_contains(?::VARCHAR[], t.o)"
        )
        found = list(self._rows(query, [others]))
        empty = pa.table({VERTEX: pa.array([], _TEXT), CLASH: pa.array([], _TEXT)})
        return pa.concat_tables(found) if found else empty

    def unit_answer(self, unit: WorkUnit) -> tuple[set[str] | None, Iterator[pa.Table]]:
        """The unit's term table (as :func:`~._queries.unit_query` gives it), in batches, and
        for a property facet the value kinds of the whole unit (for one column type)."""
        plan = self.plan
        if unit.table == "edges":
            source_type, predicate = plan.relations[unit.name]
            query = (
                f"SELECT DISTINCT s AS {SOURCE}, o AS {TARGET} FROM links WHERE p = ? "
                f"AND s IN (SELECT s FROM {self.members(source_type)})"
            )
            return None, self._rows(query, [predicate])
        if unit.facet is None:
            return None, self._rows(f"SELECT s AS {VERTEX} FROM {self.members(unit.name)}", [])
        if unit.facet == plan.graph_property:
            query = (
                f"SELECT DISTINCT s AS {VERTEX}, coalesce(g, '') AS {VALUE} FROM types "
                f"WHERE o = ? AND s IN (SELECT s FROM {self.members(unit.name)})"
            )
            return None, self._rows(query, [plan.classes[unit.name]])
        predicate = plan.predicates[(unit.name, unit.facet)]
        self.con.execute(
            f"CREATE OR REPLACE TABLE facet AS SELECT DISTINCT s AS {VERTEX}, o AS {VALUE}, "
            f"o_datatype AS {VALUE}_datatype, o_lang AS {VALUE}_lang FROM literals "
            f"WHERE p = ? AND s IN (SELECT s FROM {self.members(unit.name)})",
            [predicate],
        )
        return self._facet_kinds(), self._facet_rows()


def _whole_subjects(batches: Iterator[pa.Table]) -> Iterator[pa.Table]:
    """Batches sorted by ``vertex`` re-cut so that no subject spans two of them."""
    carry: pa.Table | None = None
    for batch in batches:
        if carry is not None:
            batch = pa.concat_tables([carry, batch])
        if not batch.num_rows:
            continue
        ids = batch.column(VERTEX)
        last = ids[-1]
        tail = pc.equal(ids, last)
        carry = batch.filter(tail)
        head = batch.filter(pc.invert(tail))
        if head.num_rows:
            yield head
    if carry is not None and carry.num_rows:
        yield carry
