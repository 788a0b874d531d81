"""Reading Parquet table files straight into the snapshot, without staging a copy.

For a work unit whose every file entry is a Parquet file whose columns need no gate (no
value can be ill-typed, no text needs parsing), the snapshot table is exactly the files'
rows, projected, cast and filtered: :func:`scan_plan` says so with one
:class:`~graphmill.engine.FileScan` per entry, which an engine that reads input files
itself sorts and streams into the snapshot's writer (``canonical-merge``). Everything else
(CSV, text under a non-string kind, lists, timestamps, decimals, unsigned 64-bit integers,
a missing or misnamed column, a file without statistics that show no ID is missing) returns
``None``: the unit is staged page by page, whose reader types, gates and names every bad
row as before. The two routes give the same rows, types and value kinds (tested against
each other in ``tests/connectors/test_table_scans.py``).

Accepted (Arrow type of the file's column, declared kind) pairs, each with its snapshot type:
IDs and selectors: text or integers, as text. Properties: text under ``string`` (empty text
is missing, as the gate makes it); dictionary-encoded text under no kind or ``string``
(typed values, so empty text stays a value, as the staged reader keeps it); integers up to
32-bit unsigned / 64-bit signed under no kind, ``integer`` or ``float`` (they stay integers,
as the gate keeps them); floats under no kind or ``float``; booleans under no kind or
``boolean``; ``date32`` under no kind or ``date``.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import pyarrow as pa
import pyarrow.parquet as pq

from graphmill.engine._base import FileScan

if TYPE_CHECKING:
    from graphmill.spec import PropertySpec

_TEXT = (pa.string(), pa.large_string(), pa.string_view())
_KINDS: dict[pa.DataType, tuple[pa.DataType, tuple[str | None, ...]]] = {
    **{t: (pa.int64(), (None, "integer", "float")) for t in (
        pa.int8(), pa.int16(), pa.int32(), pa.int64(), pa.uint8(), pa.uint16(), pa.uint32()
    )},
    pa.float32(): (pa.float64(), (None, "float")),
    pa.float64(): (pa.float64(), (None, "float")),
    pa.bool_(): (pa.bool_(), (None, "boolean")),
    pa.date32(): (pa.date32(), (None, "date")),
}  # fmt: skip


_EMPTY = (FileScan(Path(), pa.schema([]), ()), pa.schema([]))  # an entry without rows


@dataclass(frozen=True)
class Entry:
    """One file entry of a unit, as the source reads it: its path, the file's columns for the
    IDs (in the snapshot's order), the selector ``(column, value)`` if any, its format."""

    path: Path
    ids: tuple[str, ...]
    select: tuple[str, str] | None
    parquet: bool


def scan_plan(
    entries: list[Entry],
    id_names: list[str],
    properties: tuple[PropertySpec, ...],
) -> tuple[list[FileScan], pa.Schema] | None:
    """The scans of a unit and its snapshot schema, or ``None`` when the unit must be staged
    (see the module doc)."""
    if not entries:
        return None
    scans: list[FileScan] = []
    schema: pa.Schema | None = None
    for entry in entries:
        if not entry.parquet:
            return None
        found = _entry_scan(entry, id_names, properties)
        if found is None:
            return None
        if found is _EMPTY:
            continue  # no rows, so no page: its types do not count either
        scan, mine = found
        if schema is not None and not schema.equals(mine):
            return None  # types differ between files: the staged merge unifies them
        schema = mine
        scans.append(scan)
    return (scans, schema) if schema is not None else None


def _entry_scan(
    entry: Entry, id_names: list[str], properties: tuple[PropertySpec, ...]
) -> tuple[FileScan, pa.Schema] | None:
    try:
        meta = pq.read_metadata(entry.path)
        arrow = meta.schema.to_arrow_schema()
    except (OSError, pa.ArrowException, UnicodeDecodeError):
        return None  # the staged reader names the problem
    names = arrow.names
    wanted = [*entry.ids, *(p.source_key for p in properties)]
    if entry.select:
        wanted.append(entry.select[0])
    if any(names.count(n) != 1 for n in wanted):
        return None
    if meta.num_rows == 0:
        return _EMPTY
    if len({n.lower() for n in names}) != len(names):
        return None  # SQL engines match column names without case
    fields = [pa.field(n, pa.string(), nullable=False) for n in id_names]
    blank = []
    for column in [*entry.ids, *([entry.select[0]] if entry.select else [])]:
        if not _key_type(arrow.field(column).type):
            return None
    for column in entry.ids:
        if not _ids_present(meta, names.index(column)):
            return None
    for prop in properties:
        if prop.multi:
            return None
        t = arrow.field(prop.source_key).type
        if t in _TEXT and prop.kind == "string":  # the gate reads text: empty is missing
            fields.append(pa.field(prop.name, pa.string()))
            blank.append(prop.name)
            continue
        if _plain(t) in _TEXT and pa.types.is_dictionary(t) and prop.kind in (None, "string"):
            fields.append(pa.field(prop.name, pa.string()))  # typed values: empty is a value
            continue
        target, kinds = _KINDS.get(t, (None, ()))
        if target is None or prop.kind not in kinds:
            return None
        fields.append(pa.field(prop.name, target))
    schema = pa.schema(fields)
    sources = (*entry.ids, *(p.source_key for p in properties))
    scan = FileScan(entry.path, schema, sources, frozenset(blank), entry.select)
    return scan, schema


def _plain(t: pa.DataType) -> pa.DataType:
    """A dictionary's value type for text (read as its values); other types as they are."""
    if pa.types.is_dictionary(t) and t.value_type in _TEXT:
        return t.value_type
    return t


def _key_type(t: pa.DataType) -> bool:
    t = _plain(t)
    return t in _TEXT or (pa.types.is_integer(t))


def _ids_present(meta: pq.FileMetaData, index: int) -> bool:
    """Whether the file's statistics show no null and no empty ID in column ``index`` (for
    text, a least value that is not empty); ``False`` when a row group lacks statistics."""
    for g in range(meta.num_row_groups):
        chunk = meta.row_group(g).column(index)
        stats = chunk.statistics
        if stats is None or not stats.has_null_count or stats.null_count:
            return False
        if chunk.num_values and (not stats.has_min_max or stats.min in ("", b"")):
            return False
    return True
