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
import pyarrow.csv as pacsv
import pyarrow.parquet as pq

from graphmill._columns import value_kinds_of
from graphmill.connectors import _lexical
from graphmill.connectors._declared import ILL_TYPED, apply_declared, ill_typed_text
from graphmill.connectors._fingerprints import FileFingerprints
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
from graphmill.errors import GraphmillError, InputError, SourceUnavailableError, SpecError
from graphmill.spec import PipelineSpec, PropertySpec, RelationSpec

BLOCK_SIZE = 16 << 20


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
                if _format_of(path, entry) == "parquet":
                    names.update(pq.read_schema(path).names)
                else:
                    names.update(_csv_header(path, entry))
        return sorted(names)

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
            for source_name in key_columns:
                ids = batch.column(source_name)
                missing = pc.is_null(ids)
                if pa.types.is_string(ids.type):
                    missing = pc.or_(missing, pc.equal(ids, ""))
                flags = missing.to_numpy(zero_copy_only=False)
                if flags.any():
                    raise InputError(
                        f"column {source_name!r} is empty",
                        file=str(path),
                        record=f"row {first_row + int(flags.argmax())}",
                        hint="every row needs an id; fill it in or remove the row",
                    )
            if select_column:
                batch = batch.filter(pc.equal(batch.column(select_column), select_value))
            columns: dict[str, pa.Array] = {}
            kinds: dict[str, dict[str, int]] = {}
            raw: dict[str, pa.Array] = {}
            for source_name, name in zip(key_columns, key_names, strict=True):
                ids = batch.column(source_name)
                columns[name] = ids if pa.types.is_string(ids.type) else pc.cast(ids, pa.string())
            for prop in properties:
                column = batch.column(prop.source_key)
                columns[prop.name], kinds[prop.name] = _typed(column, prop)
                # the gate: ill-typed values become null, counted, their text kept
                columns[prop.name], kinds[prop.name], text = _ill_typed(
                    column, columns[prop.name], kinds[prop.name], prop
                )
                if text is not None:
                    raw[prop.name] = text
            yield Page(pa.record_batch(columns), value_kinds=kinds, raw=raw or None)


def _typed(column: pa.Array, prop: PropertySpec) -> tuple[pa.Array, dict[str, int]]:
    if not pa.types.is_string(column.type):
        return column, value_kinds_of(column)
    values = _lexical.blank_to_null(column)
    counts = _lexical.kind_counts(values)
    kind = prop.kind or _lexical.infer_kind(counts)
    return _lexical.parse_kind(values, kind), counts


def _ill_typed(
    column: pa.Array, typed: pa.Array, counts: dict[str, int], prop: PropertySpec
) -> tuple[pa.Array, dict[str, int], pa.Array | None]:
    """Apply the gate of :mod:`graphmill.connectors._declared` after typing: typed Parquet
    columns under a declared kind; text cells that did not parse as their kind (declared or
    inferred) counted as ``ill-typed`` with their text, instead of under their own kind."""
    if not pa.types.is_string(column.type):
        return apply_declared(typed, prop.kind)
    if prop.kind == "string":
        return typed, ({"string": sum(counts.values())} if counts else {}), None
    text = _lexical.blank_to_null(column)
    raw = ill_typed_text(text, typed)
    if raw is None:
        return typed, counts, None
    good = _lexical.kind_counts(text.filter(pc.is_valid(typed)))
    return typed, {**good, ILL_TYPED: len(raw) - raw.null_count}, raw


def _read_batches(
    path: Path, entry: dict[str, Any], columns: list[str]
) -> Iterator[tuple[pa.RecordBatch, int]]:
    """Batches of the needed columns, each with the 1-based data row number of its first row."""
    fmt = _format_of(path, entry)
    if not path.is_file():
        raise SourceUnavailableError(
            "file not found" if not path.exists() else "not a readable file",
            file=str(path),
            hint="check source paths in the spec (relative paths start at the spec's folder)",
        )
    try:
        if fmt == "parquet":
            parquet = pq.ParquetFile(path)
            _require_columns(parquet.schema_arrow.names, columns, path)
            row = 1
            for batch in parquet.iter_batches(columns=columns):
                yield batch, row
                row += batch.num_rows
            return
        header = _csv_header(path, entry)
        _require_columns(header, columns, path)
        reader = pacsv.open_csv(
            path,
            read_options=pacsv.ReadOptions(block_size=BLOCK_SIZE),
            parse_options=pacsv.ParseOptions(
                delimiter=entry.get("delimiter", ","), newlines_in_values=True
            ),
            convert_options=pacsv.ConvertOptions(
                include_columns=columns,
                column_types={c: pa.string() for c in columns},
                strings_can_be_null=False,
            ),
        )
        row = 1
        for batch in reader:
            yield batch, row
            row += batch.num_rows
    except PermissionError as exc:
        raise SourceUnavailableError("permission denied", file=str(path)) from exc
    except (pa.ArrowInvalid, OSError) as exc:
        raise InputError(
            _first_line(str(exc)), file=str(path), hint="fix the file or its entry in the spec"
        ) from exc


def _format_of(path: Path, entry: dict[str, Any]) -> str:
    suffix = path.suffix.lower()
    return str(entry.get("format") or ("parquet" if suffix in (".parquet", ".pq") else "csv"))


def _csv_header(path: Path, entry: dict[str, Any]) -> list[str]:
    import csv

    try:
        with open(path, newline="", encoding="utf-8") as fh:
            return next(csv.reader(fh, delimiter=entry.get("delimiter", ",")), [])
    except UnicodeDecodeError as exc:
        raise InputError("not UTF-8 text", file=str(path), line=1) from exc


def _require_columns(present: list[str], needed: list[str], path: Path) -> None:
    missing = [c for c in needed if c not in present]
    if missing:
        import difflib  # the gate: the same did-you-mean as absent-property's

        close = difflib.get_close_matches(missing[0], present, n=1, cutoff=0.6)
        guess = f"did you mean {close[0]!r}? " if close else ""
        raise InputError(
            f"missing column {missing[0]!r} ({guess}the file has: {', '.join(present)})",
            file=str(path),
            line=1,
            hint="rename the column in the file or change the column name in the spec",
        )


def _first_line(text: str) -> str:
    return text.strip().splitlines()[0] if text.strip() else "cannot parse"
