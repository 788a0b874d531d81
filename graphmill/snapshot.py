"""The staged snapshot: one Parquet table per vertex type and per relation, plus ``snapshot.json``.

Pulling writes pages into a staging folder beside the snapshot (``<snapshot>.staging``), one
Parquet part per page with a checkpoint per work unit, so an interrupted pull resumes where it
stopped. Each checkpoint holds the unit's input fingerprint (see
:meth:`~graphmill.connectors.base.GraphSource.fingerprint`): a resumed pull whose fingerprint
differs discards what that unit staged and reads it again, and says so in the pull's
warnings; ``fresh=True`` discards every staged unit. The snapshot's provenance lists the
fingerprints it was pulled under (``source.inputs``, without modification times).
Finishing merges the parts of each table, unifies their types, sorts rows into a
canonical order (by IDs, then by the other columns) and publishes the snapshot atomically.
The same graph therefore gives the same snapshot whatever the paging, partitioning, order of
extraction or number of interruptions.
"""

from __future__ import annotations

import hashlib
import json
import logging
import shutil
from collections.abc import Callable, Iterable
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from graphmill._atomic import atomic_directory, sha256_file, write_bytes_atomic
from graphmill._columns import (
    KIND_TO_ARROW,
    VALUE_KINDS_KEY,
    conform,
    decode_kinds,
    encode_kinds,
    is_multi,
    merge_kinds,
    unify_types,
    value_kinds_of,
)
from graphmill._progress import Progress, ProgressTask, SilentProgress
from graphmill._snapshot_gate import KEYS_KEPT, add_gate_facts, keys_where_absent
from graphmill._snapshot_merge import merge_plan, merge_to_file, property_columns, scans_to_file
from graphmill._version import __version__
from graphmill.connectors._fingerprints import changes, publishable
from graphmill.connectors.base import (
    IDENTITY_PREFIX,
    RAW_PREFIX,
    SOURCE_ID,
    TARGET_ID,
    VERTEX_ID,
    GraphSource,
    Page,
    WorkUnit,
)
from graphmill.errors import BundleIntegrityError, InputError, SourceUnavailableError
from graphmill.privacy import personal_data_warnings
from graphmill.spec import PipelineSpec, PropertySpec, RelationKey

_log = logging.getLogger("graphmill")

if TYPE_CHECKING:
    from graphmill.engine import Engine, FileScan

SNAPSHOT_FORMAT = 1
SNAPSHOT_FILE = "snapshot.json"
PARQUET_OPTIONS: dict[str, Any] = {"compression": "zstd", "row_group_size": 1 << 20}


@dataclass
class PullInfo:
    """What a pull did."""

    snapshot: Path
    vertex_counts: dict[str, int]
    edge_counts: dict[str, int]
    units_total: int
    units_resumed: int
    pages_read: int
    seconds: float = 0.0
    warnings: list[str] = field(default_factory=list)
    restarted: list[str] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        return {
            "snapshot": str(self.snapshot),
            "vertex_counts": self.vertex_counts,
            "edge_counts": self.edge_counts,
            "units_total": self.units_total,
            "units_resumed": self.units_resumed,
            "pages_read": self.pages_read,
            "seconds": round(self.seconds, 3),
            "warnings": self.warnings,
            "restarted": self.restarted,
        }


# --------------------------------------------------------------------------- staging


def _spec_fingerprint(spec: PipelineSpec) -> str:
    relevant = {k: spec.raw.get(k) for k in ("source", "rdf", "vertex_types", "relations")}
    return hashlib.sha256(json.dumps(relevant, sort_keys=True, default=str).encode()).hexdigest()


class Stager:
    """Writes pages of work units into ``<snapshot>.staging`` with a checkpoint per unit."""

    def __init__(self, spec: PipelineSpec, source: GraphSource, *, fresh: bool = False) -> None:
        self.spec = spec
        self.source = source
        self.fresh = fresh
        self.root = Path(f"{spec.output.snapshot}.staging")
        self.pages_read = 0
        self.units_resumed = 0
        self.inputs: dict[str, Any] = {}  # unit id -> input fingerprint
        self.restarted: dict[str, str] = {}  # unit id -> why its staged pages were dropped

    def prepare(self) -> None:
        fingerprint = _spec_fingerprint(self.spec)
        marker = self.root / "fingerprint"
        if self.root.exists() and (
            self.fresh or not marker.exists() or marker.read_text().strip() != fingerprint
        ):
            shutil.rmtree(self.root)  # asked to, or staged under another spec: start afresh
        self.root.mkdir(parents=True, exist_ok=True)
        if not marker.exists():
            write_bytes_atomic(marker, fingerprint.encode())

    def unit_dir(self, unit: WorkUnit) -> Path:
        return self.root / "units" / unit.unit_id

    def _checkpoint(self, unit: WorkUnit) -> dict[str, Any]:
        path = self.unit_dir(unit) / "checkpoint.json"
        if path.exists():
            return json.loads(path.read_text())
        return {"pages": 0, "cursor": None, "done": False}

    def _save_checkpoint(self, unit: WorkUnit, state: dict[str, Any]) -> None:
        write_bytes_atomic(self.unit_dir(unit) / "checkpoint.json", json.dumps(state).encode())

    def stage(self, unit: WorkUnit, progress_task: Any) -> None:
        directory = self.unit_dir(unit)
        directory.mkdir(parents=True, exist_ok=True)
        fingerprint = self.source.fingerprint(unit)
        self.inputs[unit.unit_id] = fingerprint
        state = self._checkpoint(unit)
        start = {"pages": 0, "cursor": None, "done": False, "fingerprint": fingerprint}
        if state["done"] or state["pages"]:
            changed = changes(state.get("fingerprint"), fingerprint)
            if changed:
                self.restarted[unit.unit_id] = "; ".join(changed)
                _log.info("%s: input changed, staged pages dropped", unit.unit_id)
                state = start
        if state["done"]:
            self.units_resumed += 1
            return
        if not self.source.capabilities.can_resume:
            state = start
        elif state["pages"]:
            self.units_resumed += 1
        # Parts beyond the checkpoint were written by a run that stopped before saving it.
        for part in directory.glob("part-*.parquet"):
            if int(part.stem.split("-")[1]) >= state["pages"]:
                part.unlink()
        for page in self.source.read(unit, state["cursor"]):
            self._write_part(directory / f"part-{state['pages']:06d}.parquet", page)
            state = {
                "pages": state["pages"] + 1,
                "cursor": page.cursor,
                "done": False,
                "fingerprint": fingerprint,
            }
            self._save_checkpoint(unit, state)
            self.pages_read += 1
            progress_task.advance(page.batch.num_rows)
        self._save_checkpoint(unit, {**state, "done": True})

    def _write_part(self, path: Path, page: Page) -> None:
        batch = page.batch
        kinds = page.value_kinds or {}
        profile = {
            name: kinds.get(name) or value_kinds_of(batch.column(i))
            for i, name in enumerate(batch.schema.names)
        }
        for name, raw in (page.raw or {}).items():  # ill-typed values' text, when there are any
            if raw.null_count < len(raw):
                batch = batch.append_column(RAW_PREFIX + name, raw.cast(pa.string()))
        for name, identity in (page.identity or {}).items():  # facet value identities
            batch = batch.append_column(IDENTITY_PREFIX + name, identity.cast(pa.string()))
        schema = batch.schema.with_metadata({VALUE_KINDS_KEY: encode_kinds(profile)})
        table = pa.Table.from_batches([batch.replace_schema_metadata(schema.metadata)], schema)
        scratch = path.with_suffix(".writing")
        pq.write_table(table, scratch, compression="lz4")  # a scratch copy: fast over small
        scratch.replace(path)

    def parts(self, units: Iterable[WorkUnit]) -> list[Path]:
        out: list[Path] = []
        for unit in units:
            out.extend(sorted(self.unit_dir(unit).glob("part-*.parquet")))
        return out


def pull(
    spec: PipelineSpec,
    source: GraphSource,
    *,
    progress: Progress | None = None,
    fresh: bool = False,
) -> PullInfo:
    """Extract every work unit of ``source`` into the spec's snapshot folder.

    Resumes what an interrupted pull staged, unit by unit, unless ``fresh`` or the unit's
    input fingerprint changed (then the unit is read again and the pull's warnings say so).
    """
    import time

    started = time.perf_counter()
    progress = progress or SilentProgress()
    stager = Stager(spec, source, fresh=fresh)
    created = _first_missing_ancestor(stager.root)
    stager.prepare()
    try:
        units = source.plan()
        workers = max(1, min(source.capabilities.max_concurrency, len(units)))
        with source:
            scans = _direct_scans(spec, source, units)

            def run(unit: WorkUnit) -> None:
                if unit.unit_id in scans:  # read once, at the merge: nothing to stage
                    stager.inputs[unit.unit_id] = source.fingerprint(unit)
                    return
                stager.stage(unit, progress.task(f"pull {unit.table} {unit.name}"))

            if workers == 1:
                for unit in units:
                    run(unit)
            else:
                pool = ThreadPoolExecutor(max_workers=workers)
                try:
                    for future in [pool.submit(run, unit) for unit in units]:
                        future.result()
                finally:  # after a failure, units not yet started are not started
                    pool.shutdown(wait=True, cancel_futures=True)
            provenance = source.provenance().to_dict()
            discovery = source.discover()
            keys = keys_where_absent(spec, source, stager.parts, units)
        inputs = {u.unit_id: publishable(stager.inputs.get(u.unit_id)) for u in units}
        provenance["inputs"] = {k: v for k, v in inputs.items() if v is not None}
    except BaseException as exc:
        # Keep staged pages for a resume, unless they are useless: bad input, or nothing staged.
        bad_input = getattr(exc, "exit_code", None) == 2
        if bad_input or not any(stager.root.glob("units/*/part-*.parquet")):
            shutil.rmtree(stager.root, ignore_errors=True)
            _remove_empty(created)
        raise
    info = publish_snapshot(
        spec,
        stager,
        units,
        provenance,
        discovery,
        keys,
        progress=progress,
        scans=scans,
        keys_of=source.property_keys,
    )
    shutil.rmtree(stager.root, ignore_errors=True)
    info.units_total = len(units)
    info.units_resumed = stager.units_resumed
    info.pages_read = stager.pages_read
    info.restarted = sorted(stager.restarted)
    info.warnings = [
        f"{unit_id}: restarted, its input changed since it was staged ({why})"
        for unit_id, why in sorted(stager.restarted.items())
    ] + info.warnings
    info.seconds = time.perf_counter() - started
    return info


def _direct_scans(
    spec: PipelineSpec, source: GraphSource, units: list[WorkUnit]
) -> dict[str, tuple[list[FileScan], pa.Schema]]:
    """The units read straight from their input files at the merge (unit id -> scans and
    snapshot schema): when the engine reads input files itself, for tables of one unit whose
    source offers scans (:meth:`GraphSource.scans`). The others are staged."""
    from graphmill.engine import engine_class

    if not engine_class(spec.engine.kind).reads_input_files or spec.rdf.graph_property:
        return {}
    tables: dict[tuple[str, str], list[WorkUnit]] = {}
    for unit in units:
        tables.setdefault((unit.table, unit.name), []).append(unit)
    out = {}
    for mine in tables.values():
        if len(mine) == 1 and mine[0].facet is None:
            plan = source.scans(mine[0])
            if plan is not None:
                out[mine[0].unit_id] = plan
    return out


def _first_missing_ancestor(path: Path) -> Path | None:
    """The outermost folder on the way to ``path`` that does not exist yet (None if all do)."""
    missing = None
    for candidate in [path, *path.parents]:
        if candidate.exists():
            break
        missing = candidate
    return missing


def _remove_empty(folder: Path | None) -> None:
    """Remove ``folder`` if it holds nothing but empty folders."""
    if folder is None or not folder.is_dir():
        return
    if any(p.is_file() for p in folder.rglob("*")):
        return
    shutil.rmtree(folder, ignore_errors=True)


# --------------------------------------------------------------------------- finishing


def _declared_type(prop: PropertySpec) -> pa.DataType:
    base = KIND_TO_ARROW.get(prop.kind or "string", pa.string())
    return pa.list_(base) if prop.multi else base


def canonical_table(
    parts: list[pa.Table],
    id_columns: list[str],
    declared: list[PropertySpec],
    *,
    engine: Engine | None = None,
) -> tuple[pa.Table, dict[str, dict[str, int]]]:
    """Merge parts into one table: declared columns only, unified types, canonical order.

    Returns the table and the value-kind profile of every property column. ``engine``
    computes the order (operation ``canonical-order``; default: the reference engine).
    """
    names = id_columns + [p.name for p in declared]
    columns: dict[str, list[Any]] = {n: [] for n in names}
    profiles: dict[str, list[dict[str, int]]] = {n: [] for n in names}
    rows = 0
    for part in parts:
        kinds = decode_kinds(part.schema.metadata)
        for name in names:
            if name in part.column_names:
                col = part.column(name)
                columns[name].append(col)
                profiles[name].append(kinds.get(name) or value_kinds_of(col))
            else:
                columns[name].append(pa.nulls(part.num_rows))
        rows += part.num_rows
    arrays: list[pa.ChunkedArray] = []
    fields: list[pa.Field] = []
    for name in names:
        chunks = columns[name]
        prop = next((p for p in declared if p.name == name), None)
        types = [c.type for c in chunks]
        target = unify_types(types)
        if pa.types.is_null(target):
            target = pa.string() if prop is None else _declared_type(prop)
        conformed = [conform(c, target) for c in chunks]
        flat = [
            ch for c in conformed for ch in (c.chunks if isinstance(c, pa.ChunkedArray) else [c])
        ]
        arrays.append(pa.chunked_array(flat, target) if flat else pa.chunked_array([], target))
        fields.append(pa.field(name, target, nullable=name not in id_columns))
    table = pa.Table.from_arrays(arrays, schema=pa.schema(fields))
    for name in id_columns:
        if table.column(name).null_count:
            raise InputError(f"{table.column(name).null_count} rows have no {name}")
    sort_keys = [n for n in names if not is_multi(table.schema.field(n).type)]
    if rows:
        table = table.take(_order_engine(engine).canonical_order(table, sort_keys))
    profile = {n: merge_kinds(profiles[n]) for n in names if n not in id_columns}
    return table.combine_chunks(), profile


def _order_engine(engine: Engine | None) -> Engine:
    if engine is not None:
        return engine
    from graphmill.engine.reference import ReferenceEngine

    return ReferenceEngine()


def faceted_table(
    stager: Stager,
    units: list[WorkUnit],
    declared: list[PropertySpec],
    *,
    engine: Engine | None = None,
) -> tuple[pa.Table, dict[str, dict[str, int]], dict[str, int]]:
    """Join a membership unit and property facet units into one row per vertex."""
    members, _ = canonical_table(
        _read_parts(stager.parts([u for u in units if u.facet is None])),
        [VERTEX_ID],
        [],
        engine=engine,
    )
    members = pa.table({VERTEX_ID: pc.unique(members.column(VERTEX_ID))}).sort_by(VERTEX_ID)
    kinds: dict[str, dict[str, int]] = {}
    collapsed: dict[str, int] = {}
    for prop in declared:
        facet_units = [u for u in units if u.facet == prop.name]
        scalar = PropertySpec(prop.name, prop.source_key, prop.kind, multi=False)
        parts = _read_parts(stager.parts(facet_units))
        identity = IDENTITY_PREFIX + prop.name
        keyed = bool(parts) and all(identity in p.column_names for p in parts)
        extra = [PropertySpec(identity, identity, "string")] if keyed else []
        facts, profile = canonical_table(parts, [VERTEX_ID], [scalar, *extra], engine=engine)
        kinds[prop.name] = profile.get(prop.name, {})
        if keyed:
            facts, kinds[prop.name] = distinct_facts(facts, identity)
        facts = facts.filter(pc.is_valid(facts.column(prop.name)))
        value_type = facts.schema.field(prop.name).type
        if prop.multi:
            grouped = facts.group_by(VERTEX_ID, use_threads=False).aggregate([(prop.name, "list")])
            grouped = grouped.rename_columns([VERTEX_ID, prop.name])
        else:
            grouped = facts.group_by(VERTEX_ID, use_threads=False).aggregate(
                [(prop.name, "first"), (prop.name, "count")]
            )
            several = pc.sum(pc.greater(grouped.column(f"{prop.name}_count"), 1)).as_py() or 0
            if several:
                collapsed[prop.name] = several
            grouped = pa.table(
                {
                    VERTEX_ID: grouped.column(VERTEX_ID),
                    prop.name: grouped.column(f"{prop.name}_first"),
                }
            )
        positions = pc.index_in(members.column(VERTEX_ID), value_set=grouped.column(VERTEX_ID))
        values = grouped.column(prop.name).take(positions)
        want = pa.list_(value_type) if prop.multi else value_type
        members = members.append_column(prop.name, values.cast(want))
    members = members.sort_by([(VERTEX_ID, "ascending")]).combine_chunks()
    fields = [pa.field(VERTEX_ID, pa.string(), nullable=False)]
    fields += [members.schema.field(p.name) for p in declared]
    return members.select([f.name for f in fields]).cast(pa.schema(fields)), kinds, collapsed


def distinct_facts(facts: pa.Table, identity: str) -> tuple[pa.Table, dict[str, int]]:
    """Facts in canonical order (vertex, value, identity) without repeats of a (vertex,
    identity) pair, and their value kinds (the identity's prefix, see ``Page.identity``).

    Equal identities have equal values, so repeats are adjacent in that order: a value
    read twice (two terms equal as values, on separate pages) is kept once, as a source
    that read the vertex's rows together keeps it, whatever order the rows came in."""
    ids, keys = (facts.column(n).combine_chunks() for n in (VERTEX_ID, identity))
    if facts.num_rows > 1:
        same = pc.and_(
            pc.equal(ids.slice(1), ids.slice(0, facts.num_rows - 1)),
            pc.equal(keys.slice(1), keys.slice(0, facts.num_rows - 1)),
        )
        keep = pa.concat_arrays([pa.array([True]), pc.invert(pc.fill_null(same, False))])
        facts = facts.filter(keep)
    found = pc.extract_regex(facts.column(identity), r"^(?P<kind>[^\x1f]*)\x1f")
    counts = pc.value_counts(pc.struct_field(found, "kind").combine_chunks().drop_null())
    profile = {
        k: n
        for k, n in zip(
            counts.field("values").to_pylist(), counts.field("counts").to_pylist(), strict=True
        )
        if k
    }
    return facts.drop_columns([identity]), dict(sorted(profile.items()))


def write_parquet(table: pa.Table, path: Path) -> None:
    """Write ``table`` deterministically (fixed options, no timestamps)."""
    path.parent.mkdir(parents=True, exist_ok=True)
    pq.write_table(table, path, **PARQUET_OPTIONS)


def _read_parts(paths: list[Path]) -> list[pa.Table]:
    return [pq.read_table(p) for p in paths]


def publish_snapshot(
    spec: PipelineSpec,
    stager: Stager,
    units: list[WorkUnit],
    provenance: dict[str, Any],
    discovery: dict[str, Any] | None,
    source_keys: dict[tuple[str, str], list[str]] | None = None,
    *,
    progress: Progress | None = None,
    scans: dict[str, tuple[list[FileScan], pa.Schema]] | None = None,
    keys_of: Callable[[WorkUnit], list[str] | None] | None = None,
) -> PullInfo:
    """Merge what the pull staged (and read the ``scans`` units straight from their input
    files) into the snapshot, published atomically. ``keys_of(unit)``: the source's property
    keys, asked for scanned tables where a declared property has no value at all."""
    scans = scans or {}
    source_keys = dict(source_keys or {})
    tables: list[dict[str, Any]] = []
    warnings: list[str] = []
    vertex_counts: dict[str, int] = {}
    edge_counts: dict[str, int] = {}
    from graphmill.engine import open_engine

    progress = progress or SilentProgress()
    with (
        atomic_directory(spec.output.snapshot, kind="snapshot", key="output.snapshot") as scratch,
        open_engine(spec) as engine,
    ):
        graph_prop = spec.rdf.graph_property
        extra = [PropertySpec(graph_prop, graph_prop, "string")] if graph_prop else []
        for name, vt in spec.vertex_types.items():
            mine = [u for u in units if u.table == "vertices" and u.name == name]
            declared = list(vt.properties) + extra
            rel_path = f"vertices/{name}.parquet"
            direct = None
            if any(u.facet for u in mine):
                table, kinds, collapsed = faceted_table(stager, mine, declared, engine=engine)
                warnings += [
                    f"{name}.{prop}: {n} vertices had several values for a single-valued "
                    "property; the smallest was kept (declare it 'multi: true' to keep all)"
                    for prop, n in collapsed.items()
                ]
                write_parquet(table, scratch / rel_path)
            elif (direct := _scanned(scans, mine)) is not None:
                table, kinds = _scanned_table(
                    engine, direct, scratch / rel_path, progress, f"vertices {name}"
                )
                _ask_keys(source_keys, ("vertices", name), scratch / rel_path, kinds, mine, keys_of)
            else:
                table, kinds = _merged_table(
                    engine,
                    stager.parts(mine),
                    [VERTEX_ID],
                    declared,
                    scratch / rel_path,
                    progress.task(f"merge vertices {name}", total=_staged_rows(stager, mine)),
                )
            warnings += personal_data_warnings(
                name, table, {p.name: p.source_key for p in vt.properties}
            )
            entry = _table_entry("vertices", name, rel_path, scratch, kinds)
            vertex_counts[name] = entry["rows"]
            staged = [] if direct is not None else stager.parts(mine)
            add_gate_facts(entry, staged, [VERTEX_ID], scratch, source_keys)
            tables.append(entry)
        for rel in spec.relations:
            dotted = rel.key.dotted
            mine = [u for u in units if u.table == "edges" and u.name == dotted]
            rel_path = f"edges/{dotted}.parquet"
            if (direct := _scanned(scans, mine)) is not None:
                table, kinds = _scanned_table(
                    engine, direct, scratch / rel_path, progress, f"edges {dotted}"
                )
                _ask_keys(source_keys, ("edges", dotted), scratch / rel_path, kinds, mine, keys_of)
            else:
                table, kinds = _merged_table(
                    engine,
                    stager.parts(mine),
                    [SOURCE_ID, TARGET_ID],
                    list(rel.properties),
                    scratch / rel_path,
                    progress.task(f"merge edges {dotted}", total=_staged_rows(stager, mine)),
                )
            warnings += personal_data_warnings(
                dotted, table, {p.name: p.source_key for p in rel.properties}
            )
            entry = _table_entry("edges", dotted, rel_path, scratch, kinds)
            edge_counts[dotted] = entry["rows"]
            staged = [] if direct is not None else stager.parts(mine)
            add_gate_facts(entry, staged, [SOURCE_ID, TARGET_ID], scratch, source_keys)
            tables.append(entry)
        document = {
            "snapshot_format": SNAPSHOT_FORMAT,
            "graphmill_version": __version__,
            "name": spec.name,
            "source": provenance,
            "discovery": discovery,
            "tables": tables,
            "warnings": warnings,
        }
        from graphmill._schemas import validate_document

        validate_document("snapshot", document)
        (scratch / SNAPSHOT_FILE).write_text(json.dumps(document, indent=2, sort_keys=True) + "\n")
    return PullInfo(
        spec.output.snapshot, vertex_counts, edge_counts, len(units), 0, 0, warnings=warnings
    )


def _merged_table(
    engine: Engine,
    parts: list[Path],
    id_columns: list[str],
    declared: list[PropertySpec],
    path: Path,
    task: ProgressTask,
) -> tuple[pa.Table, dict[str, dict[str, int]]]:
    """Merge a table's staged parts into ``path``; returns its property columns (for the
    personal-data scan; the whole table when merged in memory) and value-kind profiles.
    Parts that need no type unification are merged by the engine, streamed
    (:mod:`graphmill._snapshot_merge`), with ``task`` advanced by the rows written."""
    plan = merge_plan(parts, id_columns, [p.name for p in declared])
    if plan is None:
        table, kinds = canonical_table(_read_parts(parts), id_columns, declared, engine=engine)
        write_parquet(table, path)
        task.advance(table.num_rows)
        return table, kinds
    schema, kinds = plan
    merge_to_file(engine, parts, schema, path, PARQUET_OPTIONS, advance=task.advance)
    return property_columns(path, schema, id_columns), kinds


def _scanned(
    scans: dict[str, tuple[list[FileScan], pa.Schema]], units: list[WorkUnit]
) -> tuple[list[FileScan], pa.Schema] | None:
    """The scans of a table read straight from its input files, or None (it was staged)."""
    return scans.get(units[0].unit_id) if len(units) == 1 else None


def _scanned_table(
    engine: Engine,
    direct: tuple[list[FileScan], pa.Schema],
    path: Path,
    progress: Progress,
    what: str,
) -> tuple[pa.Table, dict[str, dict[str, int]]]:
    """A table read from its input files into ``path``: its property columns (for the
    personal-data scan) and value-kind profiles."""
    found, schema = direct
    total = sum(pq.read_metadata(f.path).num_rows for f in found)  # before any selector
    task = progress.task(f"pull and merge {what}", total=total)
    kinds = scans_to_file(engine, found, schema, path, PARQUET_OPTIONS, advance=task.advance)
    ids = [f.name for f in schema if not f.nullable]
    return property_columns(path, schema, ids), kinds


def _ask_keys(
    keys: dict[tuple[str, str], list[str]],
    table_key: tuple[str, str],
    path: Path,
    kinds: dict[str, dict[str, int]],
    units: list[WorkUnit],
    keys_of: Callable[[WorkUnit], list[str] | None] | None,
) -> None:
    """As :func:`graphmill._snapshot_gate.keys_where_absent` does for staged tables: the
    source's property keys when a declared property of a table with rows has no value."""
    if keys_of is None or not any(sum(k.values()) == 0 for k in kinds.values()):
        return
    if pq.read_metadata(path).num_rows:
        found = keys_of(units[0])
        if found is not None:
            keys[table_key] = sorted(found)[:KEYS_KEPT]


def _staged_rows(stager: Stager, units: list[WorkUnit]) -> int:
    return sum(pq.read_metadata(p).num_rows for p in stager.parts(units))


def _table_entry(
    kind: str,
    name: str,
    rel_path: str,
    root: Path,
    kinds: dict[str, dict[str, int]],
) -> dict[str, Any]:
    meta = pq.read_metadata(root / rel_path)
    return {
        "kind": kind,
        "name": name,
        "file": rel_path,
        "rows": meta.num_rows,
        "sha256": sha256_file(root / rel_path),
        "columns": [
            {"name": f.name, "arrow_type": str(f.type), "value_kinds": kinds.get(f.name, {})}
            for f in meta.schema.to_arrow_schema()
        ],
    }


# --------------------------------------------------------------------------- reading


class Snapshot:
    """A published snapshot, opened for reading; file hashes are checked on open."""

    def __init__(self, root: Path, document: dict[str, Any]) -> None:
        self.root = root
        self.document = document
        self._entries = {(t["kind"], t["name"]): t for t in document["tables"]}

    @classmethod
    def open(cls, root: str | Path, *, verify: bool = True) -> Snapshot:
        root = Path(root)
        manifest = root / SNAPSHOT_FILE
        if not manifest.exists():
            raise SourceUnavailableError(
                "no snapshot here", file=str(root), hint="run 'graphmill pull' first"
            )
        document = json.loads(manifest.read_text())
        if verify:
            files = [(e["file"], e["sha256"]) for e in document["tables"]]
            files += [
                (e["ill_typed"]["file"], e["ill_typed"]["sha256"])
                for e in document["tables"]
                if "ill_typed" in e
            ]
            for name, digest in files:
                path = root / name
                if not path.exists() or sha256_file(path) != digest:
                    raise BundleIntegrityError(
                        "snapshot file is missing or its sha256 differs from snapshot.json",
                        file=str(path),
                        hint="pull again",
                    )
        return cls(root, document)

    @property
    def vertex_types(self) -> list[str]:
        return [t["name"] for t in self.document["tables"] if t["kind"] == "vertices"]

    @property
    def relations(self) -> list[RelationKey]:
        return [
            RelationKey.parse(t["name"]) for t in self.document["tables"] if t["kind"] == "edges"
        ]

    def vertices(self, vertex_type: str) -> pa.Table:
        return pq.read_table(self.root / self._entries[("vertices", vertex_type)]["file"])

    def edges(self, relation: RelationKey) -> pa.Table:
        return pq.read_table(self.root / self._entries[("edges", relation.dotted)]["file"])

    def file(self, kind: str, name: str) -> Path:
        """The Parquet file of a table (``kind`` is vertices or edges), for engines that scan
        files themselves."""
        return self.root / self._entries[(kind, name)]["file"]

    def rows(self, kind: str, name: str) -> int:
        """A table's row count, from ``snapshot.json`` (nothing is read)."""
        return int(self._entries[(kind, name)]["rows"])

    def value_kinds(self, kind: str, name: str) -> dict[str, dict[str, int]]:
        entry = self._entries[(kind, name)]
        return {c["name"]: c["value_kinds"] for c in entry["columns"]}

    def ill_typed(self, kind: str, name: str) -> pa.Table | None:
        """The table's ill-typed values (IDs, ``property``, ``raw``), or None if it has none."""
        entry = self._entries[(kind, name)].get("ill_typed")
        return pq.read_table(self.root / entry["file"]) if entry else None

    def source_keys(self, kind: str, name: str) -> list[str] | None:
        """The property keys the source held for the table, when the pull recorded them."""
        keys = self._entries[(kind, name)].get("source_keys")
        return list(keys) if keys is not None else None

    @property
    def provenance(self) -> dict[str, Any]:
        return self.document["source"]


TableReader = Callable[[str], pa.Table]
