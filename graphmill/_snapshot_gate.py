"""What the snapshot keeps for the gate (see ``graphmill/connectors/_declared.py``): the
ill-typed values of each table with their raw text, and, where a declared property had no
value at all, the property keys the source holds there (for did-you-mean suggestions).
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from graphmill._atomic import sha256_file
from graphmill._columns import decode_kinds
from graphmill.connectors.base import RAW_PREFIX, GraphSource, WorkUnit
from graphmill.spec import PipelineSpec

KEYS_KEPT = 500  # source keys recorded per table, for did-you-mean suggestions
PARQUET_OPTIONS: dict[str, Any] = {"compression": "zstd", "row_group_size": 1 << 20}


def keys_where_absent(
    spec: PipelineSpec,
    source: GraphSource,
    parts: Callable[[list[WorkUnit]], list[Path]],
    units: list[WorkUnit],
) -> dict[tuple[str, str], list[str]]:
    """For each table with rows where a declared property has no value at all (not even an
    ill-typed one), the property keys the source holds there (for a did-you-mean)."""
    out: dict[tuple[str, str], list[str]] = {}
    tables = [("vertices", n, vt.properties) for n, vt in spec.vertex_types.items()]
    tables += [("edges", r.key.dotted, r.properties) for r in spec.relations]
    for table, name, props in tables:
        mine = [u for u in units if u.table == table and u.name == name]
        profiles: dict[str, int] = {p.name: 0 for p in props}
        rows = 0
        for path in parts(mine):
            meta = pq.read_metadata(path)
            rows += meta.num_rows
            kinds = decode_kinds(meta.schema.to_arrow_schema().metadata)
            for prop in profiles:
                profiles[prop] += sum(kinds.get(prop, {}).values())
        if rows and any(n == 0 for n in profiles.values()):
            keys = source.property_keys(mine[0]) if mine else None
            if keys is not None:
                out[(table, name)] = sorted(keys)[:KEYS_KEPT]
    return out


def ill_typed_table(paths: list[Path], id_columns: list[str]) -> pa.Table:
    """Every ill-typed value kept by the staged parts: the ID columns, ``property`` and
    ``raw`` (the source's text), one row per distinct value, in canonical order."""
    pieces = []
    for path in paths:
        names = pq.read_schema(path).names
        for column in (n for n in names if n.startswith(RAW_PREFIX)):
            part = pq.read_table(path, columns=[*id_columns, column])
            part = part.filter(pc.is_valid(part.column(column)))
            prop = pa.array([column[len(RAW_PREFIX) :]] * part.num_rows, pa.string())
            pieces.append(
                pa.table(
                    {
                        **{c: part.column(c).cast(pa.string()) for c in id_columns},
                        "property": prop,
                        "raw": part.column(column),
                    }
                )
            )
    schema = pa.schema([*(pa.field(c, pa.string()) for c in id_columns)])
    schema = schema.append(pa.field("property", pa.string())).append(pa.field("raw", pa.string()))
    if not pieces:
        return schema.empty_table()
    table = pa.concat_tables([p.cast(schema) for p in pieces])
    table = table.group_by(schema.names, use_threads=False).aggregate([]).select(schema.names)
    order = ["property", *id_columns, "raw"]
    return table.sort_by([(n, "ascending") for n in order]).combine_chunks()


def add_gate_facts(
    entry: dict[str, Any],
    parts: list[Path],
    id_columns: list[str],
    root: Path,
    source_keys: dict[tuple[str, str], list[str]] | None,
) -> None:
    """Add to a table entry its ill-typed values (a file beside the table, when there are
    any) and the source's property keys (when the pull asked for them)."""
    raw = ill_typed_table(parts, id_columns)
    if raw.num_rows:
        rel_path = f"ill_typed/{entry['kind']}/{entry['name']}.parquet"
        (root / rel_path).parent.mkdir(parents=True, exist_ok=True)
        pq.write_table(raw, root / rel_path, **PARQUET_OPTIONS)
        entry["ill_typed"] = {
            "file": rel_path,
            "rows": raw.num_rows,
            "sha256": sha256_file(root / rel_path),
        }
    keys = (source_keys or {}).get((entry["kind"], entry["name"]))
    if keys is not None:
        entry["source_keys"] = keys
