"""The live Gremlin source: id-ordered streams per label, resumable at every page.

Each work unit (a vertex label, or an edge label between two vertex labels; optionally one
of N id-range partitions of it) is read as *one* traversal ordered by id, so the server
sorts once per unit rather than once per page. Rows are cut into pages of ``page_size``;
a page's cursor is the last id it holds (JSON with the id's type), and a broken stream is
reopened after that id: per page, transient failures are retried with backoff, and a later
``pull`` resumes from the stager's checkpoint. When a unit ends, the number of rows read is
compared with a server-side count of the unit, so a graph that changed under the pull (or
ids of several types in one label) is reported rather than silently mis-read.

Vertex and edge ids become strings with ``str()`` of the Gremlin id (``1`` → ``"1"``).
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

from graphmill.connectors._fingerprints import key_digest
from graphmill.connectors.base import (
    GraphSource,
    Page,
    Provenance,
    SourceCapabilities,
    WorkUnit,
)
from graphmill.connectors.gremlin import _cursor, _discovery, _traversals
from graphmill.connectors.gremlin._client import ChannelPool
from graphmill.connectors.gremlin._errors import call_with_retries
from graphmill.connectors.gremlin._pages import StreamPager, rows_to_batch
from graphmill.connectors.gremlin._settings import GremlinSettings
from graphmill.connectors.gremlin._traversals import Scope
from graphmill.errors import InputError, SourceServerError
from graphmill.spec import PipelineSpec, PropertySpec

META_SUFFIX = "__meta"


@dataclass(frozen=True)
class _UnitShape:
    """What a unit reads: its scope and the columns to build."""

    scope: Scope
    properties: tuple[PropertySpec, ...]
    meta_columns: tuple[tuple[str, str], ...]  # (column name, property key)


class GremlinSource(GraphSource):
    """Reads a TinkerPop-enabled server over WebSocket (kind ``gremlin``)."""

    kind = "gremlin"
    capabilities = SourceCapabilities(
        can_resume=True, can_partition=True, knows_schema=True, max_concurrency=2
    )

    def __init__(self, spec: PipelineSpec) -> None:
        super().__init__(spec)
        self.settings = GremlinSettings.from_spec(spec)
        self.capabilities = SourceCapabilities(  # type: ignore[misc]
            can_resume=True,
            can_partition=True,
            knows_schema=True,
            max_concurrency=self.settings.concurrency,
        )
        self._pool: ChannelPool | None = None
        self._bounds: dict[tuple[str, str], list[Any]] = {}

    # -- life cycle ------------------------------------------------------------------
    @property
    def pool(self) -> ChannelPool:
        if self._pool is None:
            self._pool = ChannelPool(self.settings)
        return self._pool

    def close(self) -> None:
        pool, self._pool = self._pool, None
        if pool is not None:
            pool.close()

    # -- planning --------------------------------------------------------------------
    def shape(self, unit: WorkUnit) -> _UnitShape:
        """The scope and columns of ``unit`` (partition bounds as planned)."""
        if unit.table == "vertices":
            vt = self.spec.vertex_types[unit.name]
            scope = Scope(edges=False, label=vt.match)
            props = vt.properties
        else:
            rel = self.spec.relation(unit.relation)
            types = self.spec.vertex_types
            scope = Scope(
                edges=True,
                label=rel.match,
                out_label=types[rel.key.source_type].match,
                in_label=types[rel.key.target_type].match,
            )
            props = rel.properties
        meta: list[tuple[str, str]] = []
        plain: list[PropertySpec] = list(props)
        if self.settings.meta_properties == "keep" and unit.table == "vertices":
            by_name = {p.name: p for p in props}
            for prop in props:
                owner = by_name.get(prop.name.removesuffix(META_SUFFIX))
                if prop.name.endswith(META_SUFFIX) and owner is not None and owner is not prop:
                    meta.append((prop.name, owner.source_key))
                    plain.remove(prop)
        if unit.partitions > 1:
            key = (unit.table, unit.name)
            if key not in self._bounds:  # read() without plan(): find the same bounds
                self._bounds[key] = self._partition_bounds(unit, unit.partitions)
            bounds = self._bounds[key]
            scope = scope.with_bounds(bounds[unit.partition], bounds[unit.partition + 1])
        return _UnitShape(scope, tuple(plain), tuple(meta))

    def plan(self) -> list[WorkUnit]:
        """One unit per vertex type and relation, split into ``partitions`` id ranges."""
        parts = self.settings.partitions
        units: list[WorkUnit] = []
        try:
            for unit in super().plan():
                if parts > 1:
                    self._bounds[(unit.table, unit.name)] = self._partition_bounds(unit, parts)
                units += [WorkUnit(unit.table, unit.name, p, parts) for p in range(parts)]
        except BaseException:
            self.close()  # the stager opens the source only after planning
            raise
        return units

    def _partition_bounds(self, unit: WorkUnit, parts: int) -> list[Any]:
        """``[None, b1, ..., None]``: ids at equal-count positions of the sorted ids."""
        scope = self.shape(WorkUnit(unit.table, unit.name)).scope
        total = int(self.pool.fetch(_traversals.count(scope).bytecode)[0])
        positions = [total * k // parts for k in range(1, parts)]
        if total == 0:
            return [None] * (parts + 1)
        found = self.pool.fetch(_traversals.boundaries(scope, positions).bytecode)[0]
        inner = [found[f"b{n}"][0] if found[f"b{n}"] else None for n in range(parts - 1)]
        return [None, *inner, None]

    # -- reading ---------------------------------------------------------------------
    def read(self, unit: WorkUnit, cursor: str | None = None) -> Iterator[Page]:
        shape = self.shape(unit)
        state = _cursor.decode(cursor, unit) if cursor else _cursor.start(shape.scope)
        if not _cursor.same_bounds(state, shape.scope):
            raise InputError(
                f"the id ranges of {unit.unit_id} changed since the interrupted pull began",
                hint=f"the graph changed: delete {self.spec.output.snapshot}.staging, pull again",
                source=self.settings.url,
            )
        keys = [p.source_key for p in shape.properties]
        metas = [key for _name, key in shape.meta_columns]

        def traversal(after: Any) -> Any:
            return _traversals.rows(shape.scope, keys, metas, after=after).bytecode

        reader = StreamPager(self.pool, traversal, self.settings.page_size, state.after)
        try:
            while True:
                rows = call_with_retries(self.settings, reader.next_rows)
                if not rows:
                    break
                raw: dict[str, Any] = {}
                batch, kinds = rows_to_batch(
                    rows,
                    f"{unit.table} {unit.name}",
                    shape.scope.edges,
                    shape.properties,
                    [name for name, _key in shape.meta_columns],
                    raw,
                )
                state = state.advanced(rows[-1][0], len(rows))
                cursor = _cursor.encode(state)
                yield Page(batch, cursor=cursor, value_kinds=kinds or None, raw=raw or None)
        finally:
            reader.close()
        expected = int(self.pool.fetch(_traversals.count(shape.scope).bytecode)[0])
        if expected != state.rows:
            raise InputError(
                f"read {state.rows} rows of {unit.unit_id} but the server counts {expected}",
                hint="the graph changed during the pull, or a label mixes id types; delete "
                f"{self.spec.output.snapshot}.staging and pull again when the graph is stable",
                source=self.settings.url,
            )

    # -- input fingerprints (resume checks) ---------------------------------------------
    def fingerprint(self, unit: WorkUnit) -> dict[str, Any]:
        """The unit's element count and digests of its smallest and largest ids: three
        streaming server-side aggregates (no sort). A change of property values alone,
        with the same elements, is not seen."""
        scope = self.shape(unit).scope
        count = int(self.pool.fetch(_traversals.count(scope).bytecode)[0])
        ends = []
        for which in ("min", "max"):
            try:
                found = self.pool.fetch(_traversals.id_extreme(scope, which).bytecode)
            except SourceServerError:  # ids the server cannot compare: read() will say so
                found = []
            ends.append(key_digest(found[0]) if found and found[0] is not None else None)
        return {"count": count, "first": ends[0], "last": ends[1]}

    def property_keys(self, unit: WorkUnit) -> list[str]:
        """Distinct property keys of the unit's label (at most 500)."""
        scope = self.shape(WorkUnit(unit.table, unit.name)).scope
        keys = self.pool.fetch(_traversals.property_keys(scope, 500).bytecode)
        return sorted(str(k) for k in keys)

    # -- description -----------------------------------------------------------------
    def provenance(self) -> Provenance:
        """Location without credentials; the Gremlin text of each unit's traversal. Partition
        bounds are described, not listed: they are element ids, which a pseudonymised bundle
        must not reveal."""
        queries: list[str] = []
        for unit in GraphSource.plan(self):
            shape = self.shape(unit)
            keys = [p.source_key for p in shape.properties]
            metas = [key for _name, key in shape.meta_columns]
            traversal = _traversals.rows(shape.scope, keys, metas)
            queries.append(_traversals.render(traversal, self.settings.traversal_source))
        details: dict[str, Any] = {
            "traversal_source": self.settings.traversal_source,
            "partitions": self.settings.partitions,
            "meta_properties": self.settings.meta_properties,
            "ids": "str() of the Gremlin element id",
        }
        if self.settings.partitions > 1:
            details["partition_bounds"] = (
                "each unit is split at the ids found at equal-count positions of its sorted "
                "ids; partition p reads has(T.id, gte(low_p)).has(T.id, lt(high_p))"
            )
        return Provenance(self.kind, self.settings.location, queries, details)

    def discover(self) -> dict[str, Any]:
        """Labels with counts, edge label pairs, property keys and kinds from a sample."""
        return _discovery.discover(self.pool, self.settings.schema_sample)
