"""Publish real snapshots from in-memory Arrow tables, for transform and bundle tests.

A tiny :class:`GraphSource` hands the tables to :func:`graphmill.snapshot.pull` in pages of
``page_rows`` rows, so tests go through the same staging and canonical merge as any source.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pyarrow as pa

from graphmill.connectors.base import GraphSource, Page, Provenance, WorkUnit
from graphmill.snapshot import Snapshot, pull
from graphmill.spec import PipelineSpec, spec_from_dict


class TablesSource(GraphSource):
    """Serves ``tables[unit.name]`` (vertex type name or dotted relation) page by page."""

    kind = "in-memory"

    def __init__(self, spec: PipelineSpec, tables: dict[str, pa.Table], page_rows: int = 7):
        super().__init__(spec)
        self.tables = tables
        self.page_rows = page_rows

    def read(self, unit: WorkUnit, cursor: str | None = None) -> Iterator[Page]:
        table = self.tables.get(unit.name)
        if table is None:
            return
        for batch in table.to_batches(max_chunksize=self.page_rows):
            yield Page(batch)

    def provenance(self) -> Provenance:
        return Provenance("in-memory", "memory://tests", ["all rows"])


def spec_document(
    out: Path,
    vertex_types: dict[str, dict[str, Any] | None],
    relations: list[dict[str, Any]] | None = None,
    **extra: Any,
) -> dict[str, Any]:
    """A minimal spec mapping whose outputs live under ``out``."""
    first = next(iter(vertex_types))
    document: dict[str, Any] = {
        "spec_version": 1,
        "name": "testgraph",
        "source": {
            "kind": "table-files",
            "vertex_files": [{"path": "unused.csv", "id_column": "id", "type": first}],
        },
        "vertex_types": vertex_types,
        "relations": relations or [],
        "output": {"bundle": str(out / "bundle"), "snapshot": str(out / "snapshot")},
    }
    document.update(extra)
    return document


def publish(
    document: dict[str, Any], tables: dict[str, pa.Table], *, page_rows: int = 7
) -> tuple[PipelineSpec, Snapshot]:
    """Validate ``document``, pull ``tables`` through a real staged snapshot, open it."""
    spec = spec_from_dict(document)
    pull(spec, TablesSource(spec, tables, page_rows))
    return spec, Snapshot.open(spec.output.snapshot)


def bundle_bytes(root: Path) -> dict[str, bytes]:
    """Every file of a folder by relative path, for byte-for-byte comparison."""
    return {
        p.relative_to(root).as_posix(): p.read_bytes()
        for p in sorted(root.rglob("*"))
        if p.is_file()
    }
