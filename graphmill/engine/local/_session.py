"""A DuckDB connection set up from the spec's ``engine`` section, and Arrow in and out.

``memory_limit`` (default :data:`DEFAULT_MEMORY_LIMIT`) makes DuckDB spill to
``temp_directory`` (the spill folder beside the output) instead of growing; ``threads`` caps
its workers (default: every core). Each query's wall and CPU seconds are logged at info
level (shown by ``graphmill -v``). The spill folder is created by
DuckDB when it first spills and removed on close if this session created it.
"""

from __future__ import annotations

import itertools
import logging
import shutil
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa

from graphmill.engine._registry import memory_bytes
from graphmill.errors import MissingExtraError, SpecError

try:
    import duckdb
except ImportError as exc:  # pragma: no cover - duckdb is a core dependency
    raise MissingExtraError(
        "the local engine needs DuckDB, which is not installed",
        hint="install it with: pip install duckdb, or set engine.kind: reference",
    ) from exc

#: What DuckDB raises for a query that fails (e.g. a file it cannot read).
QueryError = duckdb.Error
_names = itertools.count()
#: DuckDB's share when ``engine.memory_limit`` is not set (DuckDB's own default is 80% of the
#: machine's memory, which lets a big graph crowd out everything else): enough for the sorts
#: and joins of a 10M-edge graph without spilling, and beyond that it spills.
DEFAULT_MEMORY_LIMIT = "1GiB"
_log = logging.getLogger("graphmill.engine")


@contextmanager
def _out_of_memory_as_spec_error(query: str = "") -> Iterator[None]:
    """DuckDB could not stay under ``engine.memory_limit`` even by spilling: one clear line.
    Each query's wall and CPU seconds are logged (shown with ``-v``)."""
    started, cpu = time.perf_counter(), time.process_time()
    try:
        yield
        if query:
            _log.info(
                "local engine %.2f s (CPU %.2f s): %s",
                time.perf_counter() - started,
                time.process_time() - cpu,
                " ".join(query.split())[:160],
            )
    except duckdb.OutOfMemoryException as exc:
        raise SpecError(
            f"the local engine ran out of memory ({str(exc).splitlines()[0]})",
            key_path="engine.memory_limit",
            hint="raise engine.memory_limit (or --memory-limit), or make room in the spill folder",
        ) from None


def quote(name: str) -> str:
    """An SQL identifier for a column name, whatever its characters."""
    return '"' + name.replace('"', '""') + '"'


class Session:
    """One DuckDB connection with the engine's resources applied."""

    def __init__(
        self, *, memory_limit: str | None, threads: int | None, spill_folder: Path | None
    ) -> None:
        self.connection = duckdb.connect(":memory:")
        self.spill_folder = spill_folder
        self._created_spill = spill_folder is not None and not spill_folder.exists()
        try:
            limit = memory_bytes(memory_limit or DEFAULT_MEMORY_LIMIT)
            self.connection.execute(f"SET memory_limit = '{limit}B'")
            if threads is not None:
                self.connection.execute(f"SET threads = {int(threads)}")
            if spill_folder is not None:
                self.connection.execute("SET temp_directory = ?", [str(spill_folder)])
        except duckdb.Error as exc:
            self.connection.close()
            raise SpecError(
                f"the local engine refused a setting: {exc}", key_path="engine"
            ) from exc
        # Every query that needs an order says ORDER BY; this lets DuckDB stream and spill.
        self.connection.execute("SET preserve_insertion_order = false")

    def close(self) -> None:
        self.connection.close()
        if self._created_spill and self.spill_folder is not None:
            shutil.rmtree(self.spill_folder, ignore_errors=True)

    @contextmanager
    def tables(
        self, tables: dict[str, pa.Table | Path | str], *, row_numbers: bool = False
    ) -> Iterator[dict[str, str]]:
        """Name Arrow tables (zero-copy scans) and Parquet files (scanned in parallel, never
        loaded whole) under fresh names; a ``str`` is a table of the session already and keeps
        its name. Yields key -> SQL name. ``row_numbers``: a file's view gets
        ``file_row_number``, each row's position in the file."""
        names = {
            key: table if isinstance(table, str) else f"gm_{key}_{next(_names)}"
            for key, table in tables.items()
        }
        option = ", file_row_number = true" if row_numbers else ""
        try:
            for key, table in tables.items():
                if isinstance(table, str):
                    continue
                if isinstance(table, Path):
                    literal = "'" + str(table).replace("'", "''") + "'"
                    self.connection.execute(
                        f"CREATE TEMP VIEW {names[key]} AS "
                        f"SELECT * FROM read_parquet({literal}{option})"
                    )
                else:
                    self.connection.register(names[key], table)
            yield names
        finally:
            for key, name in names.items():
                if isinstance(tables[key], str):
                    continue
                if isinstance(tables[key], Path):
                    self.connection.execute(f"DROP VIEW IF EXISTS {name}")
                else:
                    self.connection.unregister(name)

    @contextmanager
    def scratch(self, query: str, params: list[Any] | None = None) -> Iterator[str]:
        """Materialize ``query`` as a temporary table (spillable); dropped afterwards."""
        name = f"gm_tmp_{next(_names)}"
        with _out_of_memory_as_spec_error(query):
            self.connection.execute(f"CREATE TEMP TABLE {name} AS {query}", params or [])
        try:
            yield name
        finally:
            self.connection.execute(f"DROP TABLE IF EXISTS {name}")

    def source(self, table: pa.Table | Path) -> str:
        """Name a Parquet file (a view that scans it) or an Arrow table (a zero-copy scan)
        for the rest of the session."""
        name = f"gm_src_{next(_names)}"
        if isinstance(table, Path):
            literal = "'" + str(table).replace("'", "''") + "'"
            self.connection.execute(
                f"CREATE TEMP VIEW {name} AS SELECT * FROM read_parquet({literal})"
            )
        else:
            self.connection.register(name, table)
        return name

    def load_query(self, query: str) -> str:
        """Materialize ``query`` as a temporary table that lives as long as the session."""
        name = f"gm_kept_{next(_names)}"
        with _out_of_memory_as_spec_error(query):
            self.connection.execute(f"CREATE TEMP TABLE {name} AS {query}")
        return name

    def batches(self, query: str, rows: int = 1 << 16) -> Iterator[pa.RecordBatch]:
        """``query``'s result streamed as record batches of about ``rows`` rows."""
        with _out_of_memory_as_spec_error(query):
            reader = self.connection.sql(query).to_arrow_reader(rows)
            yield from reader

    def arrow(self, query: str) -> pa.Table:
        with _out_of_memory_as_spec_error(query):
            return self.connection.sql(query).to_arrow_table()

    def positions(self, query: str) -> np.ndarray:
        """The single int64 column of ``query``, as numpy."""
        table = self.arrow(query)
        if not table.num_rows:
            return np.zeros(0, dtype=np.int64)
        return np.asarray(table.column(0).to_numpy(), dtype=np.int64)

    def ints(self, query: str) -> tuple[int, ...]:
        """The single row of integers ``query`` returns (NULL as 0)."""
        with _out_of_memory_as_spec_error(query):
            rows = self.connection.sql(query).fetchall()
        row = rows[0] if rows else ()
        return tuple(int(v or 0) for v in row)

    def records(self, query: str) -> list[dict[str, Any]]:
        return self.arrow(query).to_pylist()
