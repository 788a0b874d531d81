"""Publish real snapshots from in-memory tables, for tests of anything that reads one.

:func:`publish` builds a spec with :func:`graphmill.spec.spec_from_dict`, hands
:func:`graphmill.snapshot.pull` a tiny :class:`graphmill.connectors.base.GraphSource` that
yields the given tables as pages, and opens the published :class:`Snapshot`. A table given
as a list of column mappings becomes one page per item, so pages of different column types
exercise the snapshot's type unification and value-kind profiles just as a real source does.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pyarrow as pa

from graphmill.connectors.base import GraphSource, Page, Provenance, WorkUnit
from graphmill.snapshot import Snapshot, pull
from graphmill.spec import PipelineSpec, spec_from_dict

Columns = Mapping[str, Sequence[Any] | pa.Array]


@dataclass(frozen=True)
class KindedPage:
    """A page whose source reports its own value-kind profile (as every source does for
    ill-typed values): ``value_kinds`` is ``{column: {kind: count}}``; ``raw`` the text of
    the ill-typed values, ``{column: [text or None per row]}``."""

    columns: Columns | pa.Table
    value_kinds: Mapping[str, Mapping[str, int]]
    raw: Mapping[str, Sequence[str | None]] | None = None


PageLike = Columns | pa.Table | KindedPage
Pages = PageLike | Sequence[PageLike]


def _page(value: PageLike) -> Page:
    kinds, raw = None, None
    if isinstance(value, KindedPage):
        kinds = {k: dict(v) for k, v in value.value_kinds.items()}
        if value.raw is not None:
            raw = {k: pa.array(list(v), pa.string()) for k, v in value.raw.items()}
        value = value.columns
    table = value if isinstance(value, pa.Table) else pa.table(dict(value))
    return Page(
        table.combine_chunks().to_batches()[0]
        if table.num_rows
        else pa.RecordBatch.from_pylist([], schema=table.schema),
        value_kinds=kinds,
        raw=raw,
    )


def _pages(value: Pages | None) -> list[Page]:
    if value is None:
        return []
    items = value if isinstance(value, list | tuple) else [value]
    return [_page(v) for v in items]


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
        self._tables: dict[tuple[str, str, str | None], list[Page]] = {}
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
        yield from self._tables.get((unit.table, unit.name, unit.facet), [])

    def provenance(self) -> Provenance:
        return Provenance(kind=self.kind, location="tests/validate", queries=[])

    def property_keys(self, unit: WorkUnit) -> list[str]:
        """The column names of the unit's pages (what a table source reports)."""
        pages = [
            p
            for (t, n, _), ps in self._tables.items()
            if (t, n) == (unit.table, unit.name)
            for p in ps
        ]
        return sorted({name for page in pages for name in page.batch.schema.names})


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
