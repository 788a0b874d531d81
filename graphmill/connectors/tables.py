"""Table dumps: CSV or Parquet files of vertices and edges, column roles declared in the spec.

Each file entry names its columns explicitly (``id_column``, ``source_column``,
``target_column``) and either one vertex type / relation for every row (``type`` /
``relation``) or a column whose values are matched against the spec's ``match`` values
(``type_column`` / ``relation_column``). Property columns are the spec's ``from`` names.
CSV cells are read as text, empty cells are missing, and each property is typed by its
declared ``kind`` or, if none, inferred (see :mod:`graphmill.connectors._lexical`).
Parquet columns keep their types.
"""

from __future__ import annotations

import contextlib
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from graphmill._columns import value_kinds_of
from graphmill.connectors import _lexical
from graphmill.connectors._csv import csv_batches, physical_line, read_header, require_columns
from graphmill.connectors._declared import accepted_kinds, apply_declared, ill_typed_text
from graphmill.connectors._fingerprints import FileFingerprints
from graphmill.connectors._lexical import ILL_TYPED
from graphmill.connectors._table_columns import first_missing, key_text, property_values
from graphmill.connectors._table_scans import Entry, scan_plan
from graphmill.connectors.base import (
    SOURCE_ID,
    TARGET_ID,
    VERTEX_ID,
    GraphSource,
    Page,
    Provenance,
    SourceCapabilities,
    WorkUnit,
)
from graphmill.engine import FileScan
from graphmill.errors import GraphmillError, InputError, SourceUnavailableError, SpecError
from graphmill.spec import PipelineSpec, PropertySpec, RelationSpec


class TableFilesSource(GraphSource):
    """Reads vertices and edges from CSV or Parquet files (kind ``table-files``)."""

    kind = "table-files"
    capabilities = SourceCapabilities(can_resume=False, knows_schema=False)

    def __init__(self, spec: PipelineSpec) -> None:
        super().__init__(spec)
        self.vertex_files = spec.source["vertex_files"]
        self.edge_files = spec.source.get("edge_files", [])
        for i, entry in enumerate(self.edge_files):
            if "relation" in entry:
                self._relation_by_reference(entry["relation"], f"source.edge_files[{i}].relation")
        for i, entry in enumerate(self.vertex_files):
            if "type" in entry and entry["type"] not in spec.vertex_types:
                raise SpecError(
                    f"vertex type {entry['type']!r} is not declared under vertex_types",
                    key_path=f"source.vertex_files[{i}].type",
                )
        self._prints = FileFingerprints()

    def _relation_by_reference(self, ref: str, key_path: str) -> RelationSpec:
        found = [r for r in self.spec.relations if ref in (r.key.name, r.key.dotted)]
        if len(found) != 1:
            what = "no relation" if not found else "several relations"
            raise SpecError(
                f"{what} named {ref!r}",
                key_path=key_path,
                hint="use the dotted form 'source_type.name.target_type'",
            )
        return found[0]

    def provenance(self) -> Provenance:
        paths = [e["path"] for e in self.vertex_files + self.edge_files]
        return Provenance(kind=self.kind, location=", ".join(paths))

    # -- input fingerprints (resume checks) ------------------------------------------------
    def _unit_entries(self, unit: WorkUnit) -> list[dict[str, Any]]:
        """The file entries ``read(unit)`` reads."""
        if unit.table == "vertices":
            return [
                e
                for e in self.vertex_files
                if "type_column" in e or e.get("type", unit.name) == unit.name
            ]
        return [
            e
            for e in self.edge_files
            if "relation" not in e
            or self._relation_by_reference(e["relation"], "").key.dotted == unit.name
        ]

    def fingerprint(self, unit: WorkUnit) -> dict[str, Any]:
        """Size, modification time and sha256 of every file the unit reads."""
        entries = self._unit_entries(unit)
        return self._prints.of_files(
            (self.spec.resolve_path(e["path"]), e["path"]) for e in entries
        )

    def property_keys(self, unit: WorkUnit) -> list[str]:
        """The column names of the files the unit reads (their headers or schemas)."""
        names: set[str] = set()
        for entry in self._unit_entries(unit):
            path = self.spec.resolve_path(entry["path"])
            with contextlib.suppress(GraphmillError, OSError, pa.ArrowException):
                if _format(path, entry) == "parquet":
                    names.update(pq.read_schema(path).names)
                else:
                    names.update(read_header(path, entry.get("delimiter", ",")))
        return sorted(names)

    def scans(self, unit: WorkUnit) -> tuple[list[FileScan], pa.Schema] | None:
        """The unit's Parquet files as scans, when no value needs the gate (see
        :mod:`graphmill.connectors._table_scans`); None for CSV and the other cases."""
        entries: list[Entry] = []
        if unit.table == "vertices":
            vt = self.spec.vertex_types[unit.name]
            properties = vt.properties
            for entry in self._unit_entries(unit):
                select = (entry["type_column"], vt.match) if "type_column" in entry else None
                entries.append(self._entry(entry, (entry["id_column"],), select))
            id_names = [VERTEX_ID]
        else:
            rel = self.spec.relation(unit.relation)
            properties = rel.properties
            for entry in self._unit_entries(unit):
                select = None
                if "relation" not in entry:
                    self._check_unique_match(rel)
                    select = (entry["relation_column"], rel.match)
                ends = (entry["source_column"], entry["target_column"])
                entries.append(self._entry(entry, ends, select))
            id_names = [SOURCE_ID, TARGET_ID]
        return scan_plan(entries, id_names, properties)

    def _entry(
        self, entry: dict[str, Any], ids: tuple[str, ...], select: tuple[str, str] | None
    ) -> Entry:
        path = self.spec.resolve_path(entry["path"])
        return Entry(path, ids, select, parquet=_format(path, entry) == "parquet")

    def read(self, unit: WorkUnit, cursor: str | None = None) -> Iterator[Page]:
        if unit.table == "vertices":
            vt = self.spec.vertex_types[unit.name]
            for entry in self.vertex_files:
                if entry.get("type", vt.name) != vt.name and "type_column" not in entry:
                    continue
                yield from self._pages(
                    entry,
                    [entry["id_column"]],
                    [VERTEX_ID],
                    vt.properties,
                    entry.get("type_column"),
                    vt.match,
                )
        else:
            rel = self.spec.relation(unit.relation)
            for entry in self.edge_files:
                if "relation" in entry:
                    if self._relation_by_reference(entry["relation"], "") != rel:
                        continue
                    select = None
                else:
                    select = entry["relation_column"]
                    self._check_unique_match(rel)
                yield from self._pages(
                    entry,
                    [entry["source_column"], entry["target_column"]],
                    [SOURCE_ID, TARGET_ID],
                    rel.properties,
                    select,
                    rel.match,
                )

    def _check_unique_match(self, rel: RelationSpec) -> None:
        same = [r for r in self.spec.relations if r.match == rel.match]
        if len(same) > 1:
            raise SpecError(
                f"relation_column value {rel.match!r} matches several relations: "
                + ", ".join(r.key.dotted for r in same),
                key_path="relations",
                hint="give each relation a distinct 'match' or use one edge file per relation",
            )

    def _pages(
        self,
        entry: dict[str, Any],
        key_columns: list[str],
        key_names: list[str],
        properties: tuple[PropertySpec, ...],
        select_column: str | None,
        select_value: str,
    ) -> Iterator[Page]:
        path = self.spec.resolve_path(entry["path"])
        wanted = key_columns + [p.source_key for p in properties]
        if select_column:
            wanted.append(select_column)
        for batch, first_row in _read_batches(path, entry, sorted(set(wanted))):
            keys: dict[str, pa.Array] = {}
            selectors = [select_column] if select_column else []
            for source_name in dict.fromkeys(key_columns + selectors):
                ids = key_text(batch.column(source_name), source_name, str(path), first_row + 1)
                keys[source_name] = ids
                if source_name in key_columns:
                    missing = first_missing(ids)
                    if missing is not None:
                        raise _missing_id(path, entry, source_name, first_row + missing)
            keep = pc.equal(keys[select_column], select_value) if select_column else None
            columns: dict[str, pa.Array] = {}
            kinds: dict[str, dict[str, int]] = {}
            raw: dict[str, pa.Array] = {}
            for source_name, name in zip(key_columns, key_names, strict=True):
                ids = keys[source_name]
                columns[name] = ids if keep is None else ids.filter(keep)
            for prop in properties:
                values = batch.column(prop.source_key)
                if keep is not None:
                    values = values.filter(keep)
                # the gate: ill-typed values become null, counted, their text kept
                columns[prop.name], kinds[prop.name], text = _gated(values, prop, str(path))
                if text is not None:
                    raw[prop.name] = text
            yield Page(pa.record_batch(columns), value_kinds=kinds, raw=raw or None)


def _missing_id(path: Path, entry: dict[str, Any], column: str, row: int) -> InputError:
    """A null or empty ID at 0-based data row ``row``, located by line (CSV) or row."""
    what = f"column {column!r} is empty in data row {row + 1}"
    hint = "every row needs an ID; fill it in or remove the row"
    if _format(path, entry) == "csv":
        line = physical_line(path, entry.get("delimiter", ","), row)
        if line is not None:
            return InputError(what, file=str(path), line=line, hint=hint)
    return InputError(what, file=str(path), record=f"row {row + 1}", hint=hint)


def _typed(column: pa.Array, prop: PropertySpec, file: str) -> tuple[pa.Array, dict[str, int]]:
    if not _is_text(column.type):
        values, lost = property_values(column, prop.source_key, file)
        counts = value_kinds_of(values)
        return values, {**counts, ILL_TYPED: lost} if lost else counts
    values = _lexical.blank_to_null(pc.cast(column, pa.string()))
    if prop.kind == "string":  # every value is text: no pattern to try
        present = len(values) - values.null_count
        return values, ({"string": present} if present else {})
    return _lexical.typed_values(values, prop.kind, date_format=prop.date_format)


def _format(path: Path, entry: dict[str, Any]) -> str:
    return str(
        entry.get("format") or ("parquet" if path.suffix.lower() in (".parquet", ".pq") else "csv")
    )


def _gated(
    column: pa.Array, prop: PropertySpec, file: str
) -> tuple[pa.Array, dict[str, int], pa.Array | None]:
    """Type a column, then apply the gate of :mod:`graphmill.connectors._declared`: typed
    (Parquet) columns under a declared kind; text cells that did not parse as their kind
    (declared or inferred) counted as ``ill-typed`` with their text kept."""
    typed, counts = _typed(column, prop, file)
    if not _is_text(column.type):
        typed, gated, raw = apply_declared(typed, prop.kind)
        lost = counts.get(ILL_TYPED, 0)  # unsigned integers beyond int64
        if lost:
            gated = {**gated, ILL_TYPED: gated.get(ILL_TYPED, 0) + lost}
        return typed, gated, raw
    if prop.kind == "string":
        return typed, ({"string": sum(counts.values())} if counts else {}), None
    text = _lexical.blank_to_null(pc.cast(column, pa.string()))
    raw = ill_typed_text(text, typed)
    if raw is None:
        return typed, counts, None
    if prop.kind is not None:  # what parsed is of the declared kind (or integer under float)
        good = {k: n for k, n in counts.items() if k in accepted_kinds(prop.kind)}
    else:
        good = _lexical.kind_counts(text.filter(pc.is_valid(typed)))
    return typed, {**good, ILL_TYPED: len(raw) - raw.null_count}, raw


def _is_text(t: pa.DataType) -> bool:
    return pa.types.is_string(t) or pa.types.is_large_string(t) or pa.types.is_string_view(t)


def _read_batches(
    path: Path, entry: dict[str, Any], columns: list[str]
) -> Iterator[tuple[pa.RecordBatch, int]]:
    """Batches of the needed columns, each with the 0-based data row index of its first row."""
    if not path.is_file():
        raise SourceUnavailableError(
            "file not found" if not path.exists() else "not a readable file",
            file=str(path),
            hint="check source paths in the spec (relative paths start at the spec's folder)",
        )
    try:
        if _format(path, entry) == "parquet":
            yield from _parquet_batches(path, columns)
        else:
            yield from csv_batches(path, entry.get("delimiter", ","), columns)
    except PermissionError as exc:
        raise SourceUnavailableError("permission denied", file=str(path)) from exc
    except UnicodeDecodeError as exc:  # a column name in Parquet metadata that is not UTF-8
        raise InputError(
            f"cannot read the file: text in its metadata is not UTF-8 ({exc.reason})",
            file=str(path),
            hint="write the file again",
        ) from exc
    except (pa.ArrowException, OSError) as exc:
        text = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise InputError(
            f"cannot read the file: {text[:200]}",
            file=str(path),
            hint="fix the file or its entry in the spec",
        ) from exc


def _parquet_batches(path: Path, columns: list[str]) -> Iterator[tuple[pa.RecordBatch, int]]:
    if path.stat().st_size == 0:
        raise InputError("the file is empty (0 bytes)", file=str(path), hint="write it again")
    parquet = pq.ParquetFile(path)
    require_columns(parquet.schema_arrow.names, columns, path, line=None)
    row = 0
    for batch in parquet.iter_batches(columns=columns):
        yield batch, row
        row += batch.num_rows
