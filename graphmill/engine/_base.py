"""``Engine``: one method per operation of the plan (see ``_contracts.OPERATIONS``).

An engine is opened per stage (``with open_engine(spec) as engine: ...``) and closed after,
so no state outlives a stage. Columns are Arrow arrays (``pa.Array`` or ``pa.ChunkedArray``);
positions and indices are int64 numpy arrays. Check operations take their edge tables as
:data:`TableInput`: an Arrow table, or the snapshot's Parquet file.

Progress: while a stage holds :meth:`Engine.reporting`, the engine advances the named step
tasks ("mapped", "policed") by the rows each of its queries or steps went through.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, ClassVar, TypeAlias

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from graphmill._progress import ProgressTask
from graphmill.engine._contracts import Offenders
from graphmill.spec import EngineSpec

if TYPE_CHECKING:  # the transform package imports the engines, not the other way round
    from graphmill.transform._edge_stream import EdgeStream
    from graphmill.transform._edges import EdgeOutcome

Column: TypeAlias = pa.Array | pa.ChunkedArray
#: A table given to an operation: in memory, or a Parquet file (a snapshot's) that an engine
#: may scan itself without the rows ever entering Python.
TableInput: TypeAlias = pa.Table | Path


@dataclass(frozen=True, eq=False)
class FileScan:
    """An input Parquet file read as rows of a snapshot table, for ``canonical-merge``: each
    field of ``schema`` (the table's) is the file's column named at the same place in
    ``sources``, cast to the field's type (integer IDs become their decimal text); text
    columns named in ``blank`` hold null for empty text; with ``where`` = (column, value),
    only the rows whose ``column``, as text, equals ``value`` are read."""

    path: Path
    schema: pa.Schema
    sources: tuple[str, ...]
    blank: frozenset[str] = frozenset()
    where: tuple[str, str] | None = None

    def read(self) -> pa.Table:
        """The scan's rows, in the file's order (pyarrow; engines may do it themselves)."""
        needed = list(dict.fromkeys([*self.sources, *([self.where[0]] if self.where else [])]))
        table = pq.read_table(self.path, columns=needed)
        if self.where is not None:
            selector = table.column(self.where[0]).cast(pa.string())
            table = table.filter(pc.fill_null(pc.equal(selector, self.where[1]), False))
        columns = []
        for field, source in zip(self.schema, self.sources, strict=True):
            column = table.column(source)
            if pa.types.is_dictionary(column.type):
                column = column.cast(column.type.value_type)
            column = column.cast(field.type)
            if field.name in self.blank:
                column = pc.if_else(pc.equal(column, ""), pa.scalar(None, field.type), column)
            columns.append(column)
        return pa.Table.from_arrays(columns, schema=self.schema)


class Engine(ABC):
    """The operations of the plan. ``native`` names those this engine runs itself."""

    kind: ClassVar[str] = ""
    native: ClassVar[frozenset[str]] = frozenset()

    def __init__(self, settings: EngineSpec | None = None, *, spill_folder: Path | None = None):
        self.settings = settings or EngineSpec(kind=self.kind)
        self.spill_folder = spill_folder
        self._steps: Mapping[str, ProgressTask] = {}

    @contextmanager
    def reporting(self, steps: Mapping[str, ProgressTask]) -> Iterator[None]:
        """Advance ``steps`` (by step name) with the rows each step covers, for the block."""
        self._steps = steps
        try:
            yield
        finally:
            self._steps = {}

    def covered(self, step: str, rows: int) -> None:
        """``rows`` more rows went through ``step``: advance its task, if one is reported."""
        task = getattr(self, "_steps", {}).get(step)  # getattr: for an __init__ not called
        if task is not None:
            task.advance(rows)

    def close(self) -> None:  # noqa: B027 - an engine that holds nothing has nothing to do
        """Release what the engine holds (connections, spill files)."""

    def __enter__(self) -> Engine:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # ------------------------------------------------------------------ pull
    @abstractmethod
    def canonical_order(self, table: pa.Table, keys: Sequence[str]) -> np.ndarray:
        """Stable permutation sorting ``table`` by ``keys`` ascending (contract:
        ``canonical-order``)."""

    def sorted_parts(
        self, parts: Sequence[Path | FileScan], columns: Sequence[str], keys: Sequence[str]
    ) -> Iterator[pa.RecordBatch]:
        """``columns`` of the rows of ``parts`` (Parquet files of one schema: staged parts,
        or input files read through a :class:`FileScan`) in canonical order by ``keys``
        (contract: ``canonical-merge``). This default reads the parts into memory and
        applies :meth:`canonical_order`; an engine may stream instead."""
        tables = [
            p.read() if isinstance(p, FileScan) else pq.read_table(p, columns=list(columns))
            for p in parts
        ]
        table = pa.concat_tables(tables).select(list(columns))
        yield from table.take(self.canonical_order(table, keys)).to_batches()

    #: Whether :meth:`sorted_parts` reads input files (:class:`FileScan`) without a staged
    #: copy cheaper than staging them; the pull stages table files for the other engines.
    reads_input_files: ClassVar[bool] = False

    # ------------------------------------------------------------------ build
    @abstractmethod
    def first_rows_by_id(self, ids: Column) -> np.ndarray:
        """First row of each distinct ID, in ID byte order (``vertex-index``)."""

    @abstractmethod
    def endpoint_positions(self, edges: TableInput, side: str, vertex_ids: pa.Array) -> np.ndarray:
        """Position of each edge's ``side`` (source or target) endpoint among ``vertex_ids``,
        or -1 (``endpoint-index``)."""

    @abstractmethod
    def edge_policy(
        self,
        source: np.ndarray,
        target: np.ndarray,
        *,
        same_type: bool,
        vertex_count: int,
        duplicates: str,
        self_loops: str,
        symmetrize: bool,
    ) -> EdgeOutcome:
        """Mapped endpoints in, policed and sorted edges out (``edge-policy``)."""

    def mapped_edges(
        self,
        edges: TableInput,
        source_ids: pa.Array,
        target_ids: pa.Array,
        *,
        same_type: bool,
        duplicates: str,
        self_loops: str,
        symmetrize: bool,
    ) -> EdgeOutcome:
        """Both endpoints mapped, then the policies (``mapped-edges``); this default
        composes :meth:`endpoint_positions` and :meth:`edge_policy`. Reports the edge rows
        as ``mapped``, then as ``policed``."""
        source = self.endpoint_positions(edges, "source", source_ids)
        target = self.endpoint_positions(edges, "target", target_ids)
        self.covered("mapped", len(source))
        outcome = self.edge_policy(
            source,
            target,
            same_type=same_type,
            vertex_count=len(source_ids),
            duplicates=duplicates,
            self_loops=self_loops,
            symmetrize=symmetrize,
        )
        self.covered("policed", len(source))
        return outcome

    def policed_edges(
        self,
        edges: TableInput,
        source_ids: pa.Array,
        target_ids: pa.Array,
        *,
        same_type: bool,
        duplicates: str,
        self_loops: str,
        symmetrize: bool,
    ) -> EdgeStream:
        """``mapped-edges`` whose result may stay in the engine and is read in batches when
        the bundle is written (see :mod:`graphmill.transform._edge_stream`); this default
        holds :meth:`mapped_edges`'s result in memory."""
        from graphmill.transform._edge_stream import EdgeStream

        outcome = self.mapped_edges(
            edges,
            source_ids,
            target_ids,
            same_type=same_type,
            duplicates=duplicates,
            self_loops=self_loops,
            symmetrize=symmetrize,
        )
        return EdgeStream.in_memory(outcome)

    # ------------------------------------------------------------------ check
    @abstractmethod
    def dangling_edges(
        self, edges: TableInput, source_ids: Column, target_ids: Column, k: int
    ) -> Offenders:
        """``dangling-edges``."""

    @abstractmethod
    def self_loops(self, edges: TableInput, k: int) -> Offenders:
        """``self-loops``."""

    @abstractmethod
    def repeated_edges(self, edges: TableInput, k: int) -> Offenders:
        """``repeated-edges``."""

    @abstractmethod
    def parallel_edges(self, edges: TableInput, k: int) -> Offenders:
        """``parallel-edges``."""

    @abstractmethod
    def reciprocity(self, edges: TableInput) -> Offenders:
        """``reciprocity``."""

    @abstractmethod
    def one_way_edges(self, edges: TableInput, k: int) -> Offenders:
        """``one-way-edges``."""

    @abstractmethod
    def isolated_vertices(
        self, vertex_ids: Column, sides: Sequence[tuple[TableInput, str]], k: int
    ) -> Offenders:
        """``isolated-vertices``; ``sides``: (edge table, "source" or "target") for every
        relation side where the vertex type stands."""

    @abstractmethod
    def duplicate_vertex_ids(self, vertex_ids: Column, k: int) -> Offenders:
        """``duplicate-vertex-ids``."""

    @abstractmethod
    def shared_vertex_ids(self, ids_by_type: Mapping[str, Column], k: int) -> Offenders:
        """``shared-vertex-ids``; ``ids_by_type``: vertex type -> its ID column."""
