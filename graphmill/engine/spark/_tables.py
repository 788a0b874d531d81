"""Tables in and results out of a Spark session, and the local engine's SQL in Spark's dialect.

The local engine's query texts (``engine/local/_queries.py``) are plain SQL over named
tables; Spark SQL runs them after :func:`spark_sql` rewrites the few DuckDB spellings
(``ANTI``/``SEMI JOIN``, ``VARCHAR``, ``list_transform`` lambdas). Identifiers keep their
double quotes (the session sets ``spark.sql.ansi.doubleQuotedIdentifiers``). Spark compares
strings by their UTF-8 bytes (the default ``UTF8_BINARY`` collation), as the contracts ask.
"""

from __future__ import annotations

import itertools
import re
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
from pyspark.sql import DataFrame, SparkSession

_names = itertools.count()

#: DuckDB spelling -> Spark spelling, applied in order to a query text.
_DIALECT = [
    (re.compile(r"(?<!LEFT )\bANTI JOIN\b"), "LEFT ANTI JOIN"),
    (re.compile(r"(?<!LEFT )\bSEMI JOIN\b"), "LEFT SEMI JOIN"),
    (re.compile(r"\bAS VARCHAR\)"), "AS STRING)"),
    (re.compile(r"\blist_transform\(([^,]+), lambda (\w+): "), r"transform(\1, \2 -> "),
]


def spark_sql(query: str) -> str:
    """A query of the local engine's builders, in Spark SQL.

    >>> spark_sql("SELECT list_transform(\\"m\\", lambda x: CAST(x AS VARCHAR)) FROM e "
    ...           "ANTI JOIN r ON r.s = e.t")
    'SELECT transform("m", x -> CAST(x AS STRING)) FROM e LEFT ANTI JOIN r ON r.s = e.t'
    """
    for pattern, replacement in _DIALECT:
        query = pattern.sub(replacement, query)
    return query


class Tables:
    """The temporary views one engine registered in ``session``; dropped by :meth:`drop`."""

    def __init__(self, session: SparkSession) -> None:
        self.session = session
        self._views: list[str] = []
        self._cached: list[DataFrame] = []
        self._files: dict[Path, str] = {}

    def _view(self, frame: DataFrame, key: str) -> str:
        name = f"gm_{key}_{next(_names)}"
        frame.createOrReplaceTempView(name)
        self._views.append(name)
        return name

    def arrow_view(self, table: pa.Table, key: str) -> str:
        """An Arrow table as a view (sent to the cluster once)."""
        return self._view(self.session.createDataFrame(table), key)

    def file_view(self, path: Path) -> str:
        """A Parquet file as a view, read where Spark runs (once per engine)."""
        if path not in self._files:
            self._files[path] = self._view(self.session.read.parquet(str(path)), "file")
        return self._files[path]

    def row_view(self, path: Path, column: str) -> str:
        """``column`` of a Parquet file as ``id`` with each row's position in the file as
        ``row`` (Spark's ``_metadata.row_index``; splits of a file need not come in order)."""
        frame = self.session.read.parquet(str(path))
        return self._view(
            frame.selectExpr(f"`{column}` AS id", "_metadata.row_index AS row"), "rows"
        )

    def query_view(self, query: str, key: str, *, keep: bool = False) -> str:
        """A query as a view; ``keep``: computed once and cached until :meth:`drop`."""
        frame = self.session.sql(spark_sql(query))
        if keep:
            frame = frame.cache()
            self._cached.append(frame)
        return self._view(frame, key)

    @contextmanager
    def scratch(self, query: str, key: str = "tmp") -> Iterator[str]:
        """A view of ``query`` for the ``with`` block."""
        name = self.query_view(query, key)
        try:
            yield name
        finally:
            self.session.catalog.dropTempView(name)
            self._views.remove(name)

    def drop(self) -> None:
        for frame in self._cached:
            frame.unpersist()
        for name in self._views:
            self.session.catalog.dropTempView(name)
        self._views.clear()
        self._cached.clear()
        self._files.clear()

    # ---------------------------------------------------------------- results
    def arrow(self, query: str) -> pa.Table:
        return self.session.sql(spark_sql(query)).toArrow()

    def positions(self, query: str) -> np.ndarray:
        """The single int64 column of ``query``, as numpy."""
        table = self.arrow(query)
        if not table.num_rows:
            return np.zeros(0, dtype=np.int64)
        return np.asarray(table.column(0).to_numpy(), dtype=np.int64)

    def ints(self, query: str) -> tuple[int, ...]:
        """The single row of integers ``query`` returns (NULL as 0)."""
        rows = self.session.sql(spark_sql(query)).collect()
        row = tuple(rows[0]) if rows else ()
        return tuple(int(v or 0) for v in row)

    def records(self, query: str) -> list[dict[str, Any]]:
        return self.arrow(query).to_pylist()
