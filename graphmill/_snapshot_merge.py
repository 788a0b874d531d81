"""The snapshot's canonical merge, streamed: staged parts in, one sorted Parquet file out.

When every staged part of a table already holds every column under one type that survives
the engines' round trip (the common case: one source, declared kinds), the merge needs no
type unification, so the engine sorts the parts itself (operation ``canonical-merge``) and
the rows reach the file in row-group-sized slices, never as a whole table. The file is cut
exactly as :func:`pyarrow.parquet.write_table` cuts a whole table (same options, row groups
of ``PARQUET_OPTIONS["row_group_size"]`` rows), so both paths give the same bytes.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

import pyarrow as pa
import pyarrow.parquet as pq

from graphmill._columns import decode_kinds, kind_of_type, merge_kinds, value_kinds_of
from graphmill.errors import InputError

if TYPE_CHECKING:
    from graphmill.engine import Engine, FileScan

#: Types that every engine reads from and returns to Arrow unchanged.
STREAMABLE = (pa.string(), pa.int64(), pa.float64(), pa.bool_(), pa.date32())


def merge_plan(
    parts: Sequence[Path], id_columns: list[str], names: list[str]
) -> tuple[pa.Schema, dict[str, dict[str, int]]] | None:
    """The snapshot schema and value-kind profiles of a table whose parts can be merged as
    they are; ``None`` when a part lacks a column or the types differ (merge in memory)."""
    if not parts:
        return None
    schemas = [pq.read_schema(p) for p in parts]
    fields = []
    for name in id_columns + names:
        types = {s.field(name).type if name in s.names else None for s in schemas}
        if len(types) != 1 or (kind := types.pop()) not in STREAMABLE:
            return None
        fields.append(pa.field(name, kind, nullable=name not in id_columns))
    profile = {}
    for name in names:
        kinds = []
        for path, schema in zip(parts, schemas, strict=True):
            known = decode_kinds(schema.metadata).get(name)
            kinds.append(known or value_kinds_of(pq.read_table(path, columns=[name]).column(0)))
        profile[name] = merge_kinds(kinds)
    return pa.schema(fields), profile


def null_ids(parts: Sequence[Path], id_columns: list[str]) -> None:
    """Refuse ID columns with nulls (the parts' statistics, else the column itself)."""
    for name in id_columns:
        nulls = 0
        for path in parts:
            meta = pq.read_metadata(path)
            index = meta.schema.to_arrow_schema().get_field_index(name)
            for g in range(meta.num_row_groups):
                stats = meta.row_group(g).column(index).statistics
                if stats is None or not stats.has_null_count:
                    nulls += pq.read_table(path, columns=[name]).column(0).null_count
                    break
                nulls += stats.null_count
        if nulls:
            raise InputError(f"{nulls} rows have no {name}")


def write_batches(
    batches: Iterable[pa.RecordBatch],
    schema: pa.Schema,
    path: Path,
    options: dict[str, Any],
    advance: Callable[[int], None] | None = None,
) -> int:
    """Write ``batches`` as ``schema`` with ``options`` (``pq.write_table``'s), cut into row
    groups of ``options["row_group_size"]`` rows as ``pq.write_table`` cuts a whole table;
    ``advance(rows)`` after each row group. Returns the row count."""
    path.parent.mkdir(parents=True, exist_ok=True)
    size = int(options["row_group_size"])
    rest = {k: v for k, v in options.items() if k != "row_group_size"}
    pending: list[pa.RecordBatch] = []
    held = rows = 0
    with pq.ParquetWriter(path, schema, **rest) as writer:

        def flush(n: int) -> None:
            nonlocal pending, held, rows
            table = pa.Table.from_batches(pending, schema)
            writer.write_table(table.slice(0, n).combine_chunks(), row_group_size=size)
            pending = table.slice(n).combine_chunks().to_batches()
            held -= n
            rows += n
            if advance is not None:
                advance(n)

        for batch in batches:
            arrays = [c.cast(f.type) for c, f in zip(batch.columns, schema, strict=True)]
            pending.append(pa.RecordBatch.from_arrays(arrays, schema=schema))
            held += batch.num_rows
            while held >= size:
                flush(size)
        if held or not rows:  # an empty table still gets its one empty row group
            flush(held)
    return rows


def merge_to_file(
    engine: Engine,
    parts: Sequence[Path],
    schema: pa.Schema,
    path: Path,
    options: dict[str, Any],
    advance: Callable[[int], None] | None = None,
) -> int:
    """Sort ``parts`` by every column (``canonical-merge``) into ``path``; the row count."""
    null_ids(parts, [f.name for f in schema if not f.nullable])
    batches = engine.sorted_parts(parts, schema.names, schema.names)
    return write_batches(batches, schema, path, options, advance)


def scans_to_file(
    engine: Engine,
    scans: Sequence[FileScan],
    schema: pa.Schema,
    path: Path,
    options: dict[str, Any],
    advance: Callable[[int], None] | None = None,
) -> dict[str, dict[str, int]]:
    """Input files straight into the snapshot file (``canonical-merge`` over
    :class:`~graphmill.engine.FileScan` s): read once, written once. Returns the value-kind
    profile of each property column (its non-null values, counted as they stream by; the
    scans' columns have one type each, so one kind each)."""
    names = [f.name for f in schema if f.nullable]
    counts = dict.fromkeys(names, 0)

    def counted(batches: Iterable[pa.RecordBatch]) -> Iterable[pa.RecordBatch]:
        for batch in batches:
            for name in names:
                column = batch.column(name)
                counts[name] += len(column) - column.null_count
            yield batch

    rows = engine.sorted_parts(scans, schema.names, schema.names)
    write_batches(counted(rows), schema, path, options, advance)
    return {n: ({kind_of_type(schema.field(n).type): c} if c else {}) for n, c in counts.items()}


def property_columns(path: Path, schema: pa.Schema, id_columns: list[str]) -> pa.Table:
    """The property columns of the written file's first row group: the rows the
    personal-data scan samples (its first ``privacy.SAMPLE`` rows, far fewer than a group)."""
    names = [n for n in schema.names if n not in id_columns]
    if not names:
        return pa.table({})
    return pq.ParquetFile(path).read_row_group(0, columns=names)
