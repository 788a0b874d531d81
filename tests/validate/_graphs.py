"""Publish real snapshots from in-memory tables, for tests of anything that reads one.

:func:`publish` builds a spec with :func:`graphmill.spec.spec_from_dict`, hands
:func:`graphmill.snapshot.pull` a tiny :class:`graphmill.connectors.base.GraphSource` that
yields the given tables as pages, and opens the published :class:`Snapshot`. A table given
as a list of column mappings becomes one page per item, so pages of different column types
exercise the snapshot's type unification and value-kind profiles just as a real source does.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping, Sequence
from pathlib import Path
from typing import Any

import pyarrow as pa

from graphmill.connectors.base import GraphSource, Page, Provenance, WorkUnit
from graphmill.snapshot import Snapshot, pull
from graphmill.spec import PipelineSpec, spec_from_dict

Columns = Mapping[str, Sequence[Any] | pa.Array]
Pages = Columns | pa.Table | Sequence[Columns | pa.Table]


def _pages(value: Pages | None) -> list[pa.Table]:
    if value is None:
        return []
    items = value if isinstance(value, list | tuple) else [value]
    return [v if isinstance(v, pa.Table) else pa.table(dict(v)) for v in items]


class InMemorySource(GraphSource):
    """Yields given Arrow tables as pages: vertex pages per type, edge pages per relation,
    and optional property facets ``{(vertex type, property): pages}``."""

    kind = "in-memory"

    def __init__(
        self,
        spec: PipelineSpec,
        vertices: Mapping[str, Pages],
        edges: Mapping[str, Pages],
        facets: Mapping[tuple[str, str], Pages] | None = None,
    ) -> None:
        super().__init__(spec)
        self._tables: dict[tuple[str, str, str | None], list[pa.Table]] = {}
        for name, pages in vertices.items():
            self._tables[("vertices", name, None)] = _pages(pages)
        for dotted, pages in edges.items():
            self._tables[("edges", dotted, None)] = _pages(pages)
        for (name, prop), pages in (facets or {}).items():
            self._tables[("vertices", name, prop)] = _pages(pages)

    def plan(self) -> list[WorkUnit]:
        units = super().plan()
        faceted = [WorkUnit("vertices", n, facet=f) for (_, n, f) in self._tables if f is not None]
        return units + faceted

    def read(self, unit: WorkUnit, cursor: str | None = None) -> Iterator[Page]:
        for table in self._tables.get((unit.table, unit.name, unit.facet), []):
            for batch in table.combine_chunks().to_batches() or [None]:
                if batch is not None:
                    yield Page(batch)

    def provenance(self) -> Provenance:
        return Provenance(kind=self.kind, location="tests/validate", queries=[])


def make_spec(tmp_path: Path, **document: Any) -> PipelineSpec:
    """A spec with the given top-level keys, a placeholder source and outputs in tmp_path."""
    vertex_types = document.setdefault("vertex_types", {"thing": {}})
    first = next(iter(vertex_types))
    body = {
        "spec_version": 1,
        "name": document.pop("name", "case"),
        "source": {
            "kind": "table-files",
            "vertex_files": [{"path": "unused.csv", "id_column": "id", "type": first}],
        },
        "output": {"bundle": str(tmp_path / "bundle"), "snapshot": str(tmp_path / "snapshot")},
        **document,
    }
    return spec_from_dict(body, base_dir=tmp_path)


def publish(
    tmp_path: Path,
    *,
    vertices: Mapping[str, Pages],
    edges: Mapping[str, Pages] | None = None,
    facets: Mapping[tuple[str, str], Pages] | None = None,
    **document: Any,
) -> tuple[PipelineSpec, Snapshot]:
    """Pull the given tables into a snapshot under ``tmp_path``; return the spec and it.

    ``document`` holds spec keys (``vertex_types``, ``relations``, ``checks``, ``label``,
    ``edges`` as the edge policy is named ``edge_policy`` here to keep ``edges`` for data).
    """
    if "edge_policy" in document:
        document["edges"] = document.pop("edge_policy")
    spec = make_spec(tmp_path, **document)
    pull(spec, InMemorySource(spec, vertices, edges or {}, facets))
    return spec, Snapshot.open(spec.output.snapshot)
