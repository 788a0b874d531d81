"""Unit answers computed with DuckDB from staged parts (the ``rdf-file`` engine).

:class:`FactParts` reads the parts of :mod:`._staging` (``types``, ``literals``, ``links``)
and answers each work unit with the same term table the unit's SPARQL query gives on a
store holding those quads -- an independent implementation of the semantics in
:mod:`._queries`, so the two sources can be checked against each other. The subject-to-type
resolution, property grouping and relation extraction are joins and group-bys in a DuckDB
database under ``memory_limit``, spilling to its folder, so memory does not grow with the
dump. Answers come as batches, in no particular order (the snapshot sorts, and keeps a
property value once per vertex across batches).

Given the units in the order they will be read, each unit's answer is computed into a
table of its own (:meth:`FactParts.prepare`) by a thread one unit ahead of the reader, so
DuckDB's joins for the next unit run while this process maps and stages the current one.
"""

from __future__ import annotations

import threading
from collections.abc import Iterator
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pyarrow as pa

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


@dataclass(frozen=True)
class Answer:
    """A unit's answer as :meth:`FactParts.prepare` leaves it: the table holding its rows
    (dropped once read, unless ``keep``) and, for a property facet, its value kinds."""

    table: str
    kinds: set[str] | None = None
    keep: bool = False


class FactParts:
    """DuckDB over the staged parts of one plan; :meth:`unit_answer` answers a unit.

    ``units``, the units in the order they will be read, lets a thread prepare the next
    unit's answer while the current one is read (see the module doc)."""

    def __init__(
        self,
        parts: dict[str, Path],
        plan: RdfPlan,
        folder: Path,
        *,
        units: list[WorkUnit] | None = None,
        memory_limit: str = MEMORY_LIMIT,
        threads: int = THREADS,
    ) -> None:
        duckdb = require("duckdb", "rdf")
        config = {
            "memory_limit": memory_limit,
            "threads": threads,
            "temp_directory": str(folder / "spill"),
            "preserve_insertion_order": False,
        }
        self.con: Any = duckdb.connect(":memory:", config=config)
        self.plan = plan
        self.languages = plan.languages
        for role, path in parts.items():
            self.con.read_parquet(str(path)).create_view(role)
        self._members: dict[str, str] = {}
        self._lock = threading.Lock()  # members tables are made by either thread
        self._units = {u.unit_id: u for u in units or []}
        self._order = list(self._units)
        self._ahead: dict[str, Future[Answer]] = {}
        self._pool = ThreadPoolExecutor(max_workers=1, thread_name_prefix="graphmill-rdf-units")
        self._answers = 0

    def close(self) -> None:
        for future in self._ahead.values():
            future.cancel()
        self._pool.shutdown(wait=True, cancel_futures=True)
        self.con.close()

    def members(self, vertex_type: str, con: Any = None) -> str:
        """The name of a table of the subjects of ``vertex_type`` (column ``s``), made once."""
        with self._lock:
            if vertex_type not in self._members:
                name = f"members_{len(self._members)}"
                plan = self.plan
                earlier = list(plan.earlier_classes(vertex_type))
                if plan.several_types != "first-declared":
                    earlier = []
                (con or self.con).execute(
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
        found = list(self._rows(self.con, query, [others]))
        empty = pa.table({VERTEX: pa.array([], _TEXT), CLASH: pa.array([], _TEXT)})
        return pa.concat_tables(found) if found else empty

    def prepare(self, unit: WorkUnit) -> Answer:
        """Compute ``unit``'s answer into a table (on a cursor of its own: any thread)."""
        con = self.con.cursor()
        try:
            return self._prepare(con, unit)
        finally:
            con.close()

    def _prepare(self, con: Any, unit: WorkUnit) -> Answer:
        plan = self.plan
        with self._lock:
            self._answers += 1
            table = f"answer_{self._answers}"
        if unit.table == "edges":
            source_type, predicate = plan.relations[unit.name]
            members = self.members(source_type, con)
            query = (
                f"SELECT DISTINCT s AS {SOURCE}, o AS {TARGET} FROM links WHERE p = ? "
                f"AND s IN (SELECT s FROM {members})"
            )
            params = [predicate]
        elif unit.facet is None:
            return Answer(self.members(unit.name, con), keep=True)
        elif unit.facet == plan.graph_property:
            members = self.members(unit.name, con)
            query = (
                f"SELECT DISTINCT s AS {VERTEX}, coalesce(g, '') AS {VALUE} FROM types "
                f"WHERE o = ? AND s IN (SELECT s FROM {members})"
            )
            params = [plan.classes[unit.name]]
        else:
            members = self.members(unit.name, con)
            query = (
                f"SELECT DISTINCT s AS {VERTEX}, o AS {VALUE}, o_datatype AS {VALUE}_datatype, "
                f"o_lang AS {VALUE}_lang FROM literals "
                f"WHERE p = ? AND s IN (SELECT s FROM {members})"
            )
            params = [plan.predicates[(unit.name, unit.facet)]]
        con.execute(f"CREATE TABLE {table} AS {query}", params)
        if unit.table == "edges" or unit.facet == plan.graph_property:
            return Answer(table)
        return Answer(table, kinds=self._facet_kinds(con, table))

    def _answer(self, unit: WorkUnit) -> Answer:
        """``unit``'s prepared answer; the next unit in order is handed to the thread."""
        future = self._ahead.pop(unit.unit_id, None)
        if future is None:
            future = self._pool.submit(self.prepare, unit)
        if unit.unit_id in self._units:
            position = self._order.index(unit.unit_id)
            for passed in [u for u in self._ahead if self._order.index(u) < position]:
                self._pool.submit(self._discard, self._ahead.pop(passed))  # a unit not read
            upcoming = self._order[position + 1 : position + 2]
            if upcoming and not self._ahead:
                self._ahead[upcoming[0]] = self._pool.submit(self.prepare, self._units[upcoming[0]])
        return future.result()

    def _discard(self, future: Future[Answer]) -> None:
        answer = future.result()
        if not answer.keep:
            con = self.con.cursor()
            try:
                con.execute(f"DROP TABLE IF EXISTS {answer.table}")
            finally:
                con.close()

    def unit_answer(self, unit: WorkUnit) -> tuple[set[str] | None, Iterator[pa.Table]]:
        """The unit's term table (as :func:`~._queries.unit_query` gives it), in batches, and
        for a property facet the value kinds of the whole unit (for one column type)."""
        answer = self._answer(unit)
        if answer.keep:
            query = f"SELECT s AS {VERTEX} FROM {answer.table}"
        else:
            query = f"SELECT * FROM {answer.table}"
        batches = self._rows(self.con, query, [])
        if answer.kinds is not None:
            batches = self._kept(batches)
        return answer.kinds, self._dropping(batches, answer)

    def _dropping(self, batches: Iterator[pa.Table], answer: Answer) -> Iterator[pa.Table]:
        try:
            yield from batches
        finally:
            if not answer.keep:
                self.con.execute(f"DROP TABLE IF EXISTS {answer.table}")

    def _rows(
        self, con: Any, query: str, params: list[Any], rows: int | None = None
    ) -> Iterator[pa.Table]:
        reader = con.sql(query, params=params).to_arrow_reader(rows or BATCH_ROWS)
        for batch in reader:
            if batch.num_rows:
                yield _texts(pa.Table.from_batches([batch]))

    def _kept(self, batches: Iterator[pa.Table]) -> Iterator[pa.Table]:
        for batch in batches:
            keep = language_mask(
                batch.column(VALUE + "_lang").combine_chunks(),
                batch.column(VALUE + "_datatype").combine_chunks(),
                self.languages,
            )
            yield batch.filter(keep)

    def _facet_kinds(self, con: Any, table: str) -> set[str]:
        """The value kinds of a facet's answer (one well-typed, kept literal suffices)."""
        found: set[str] = set()
        datatypes = con.sql(f"SELECT DISTINCT {VALUE}_datatype FROM {table}").fetchall()
        for (datatype,) in datatypes:
            query = f"SELECT * FROM {table} WHERE {VALUE}_datatype = ?"
            for batch in self._kept(self._rows(con, query, [datatype], _PROBE_ROWS)):
                kinds = present_kinds(batch.column(VALUE), batch.column(VALUE + "_datatype"))
                if kinds:
                    found |= kinds
                    break
        return found
