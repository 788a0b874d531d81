"""What a check sees: the snapshot's tables (read once), the spec, and sampling helpers."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any, TypeVar

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill.connectors.base import SOURCE_ID, TARGET_ID, VERTEX_ID
from graphmill.snapshot import Snapshot
from graphmill.spec import PipelineSpec, PropertySpec, RelationKey, RelationSpec

if TYPE_CHECKING:
    from graphmill.engine import Engine

T = TypeVar("T")
ID_COLUMNS = {"vertices": [VERTEX_ID], "edges": [SOURCE_ID, TARGET_ID]}


@dataclass
class Outcome:
    """What one check found about one subject, before a severity is attached.

    ``found``: whether it becomes a finding; None means "when ``count`` > 0". A
    measurement (reciprocity) sets it True; a threshold rule sets it from its limit.
    ``note``: within the limit, so reported as ``info`` whatever the rule's severity.
    """

    count: int
    denominator: int
    message: str
    sample: list[dict[str, Any]] = field(default_factory=list)
    details: dict[str, Any] = field(default_factory=dict)
    found: bool | None = None
    note: bool = False

    @property
    def reported(self) -> bool:
        return self.count > 0 if self.found is None else self.found


def subject_of(table: str, name: str, prop: str | None = None) -> dict[str, str]:
    """The subject dict of a vertex type or relation (``table`` is vertices or edges)."""
    subject = {"vertex_type" if table == "vertices" else "relation": name}
    if prop is not None:
        subject["property"] = prop
    return subject


def sorted_sample(records: pa.Table, k: int) -> list[dict[str, Any]]:
    """The ``k`` smallest distinct rows of ``records``, sorted by every column in order.

    Selects the smallest ``m`` rows (a top-k selection, no full sort) and widens ``m``
    only while repeats of the same row leave fewer than ``k`` distinct ones.
    """
    if k <= 0 or records.num_rows == 0:
        return []
    keys = [(name, "ascending") for name in records.column_names]
    wanted = k
    while True:
        m = min(wanted, records.num_rows)
        top = records.take(pc.select_k_unstable(records, k=m, sort_keys=keys))
        distinct = top.group_by(top.column_names, use_threads=False).aggregate([])
        if distinct.num_rows >= k or m == records.num_rows:
            return distinct.sort_by(keys).slice(0, k).to_pylist()
        wanted *= 4


def share(count: int, total: int) -> str:
    """``count`` of ``total`` as a percentage for messages: ``'12.5%'``."""
    return f"{(100.0 * count / total) if total else 0.0:.3g}%"


def counted(n: int, noun: str, plural: str | None = None) -> str:
    """``n`` and the noun in the right number: ``counted(1, "edge")`` is ``'1 edge'``."""
    return f"{n} {noun if n == 1 else (plural or noun + 's')}"


class CheckContext:
    """The snapshot and spec as checks see them; each table is read once per run."""

    def __init__(self, spec: PipelineSpec, snapshot: Snapshot, engine: Engine) -> None:
        self.spec = spec
        self.snapshot = snapshot
        self.engine = engine  # runs the set operations of the checks
        self.sample_size = spec.checks.sample_size
        self._tables: dict[tuple[str, str], pa.Table] = {}
        self._memo: dict[tuple[Any, ...], Any] = {}
        self._present = {(t["kind"], t["name"]) for t in snapshot.document["tables"]}

    @property
    def vertex_types(self) -> list[str]:
        return self.snapshot.vertex_types

    @property
    def relations(self) -> list[RelationKey]:
        return self.snapshot.relations

    def has(self, table: str, name: str) -> bool:
        return (table, name) in self._present

    def table(self, table: str, name: str) -> pa.Table:
        """The snapshot table, or an empty one with just the ID columns if it is absent."""
        key = (table, name)
        if key not in self._tables:
            if key in self._present:
                read = self.snapshot.vertices if table == "vertices" else self.snapshot.edges
                arg: Any = name if table == "vertices" else RelationKey.parse(name)
                self._tables[key] = read(arg)
            else:
                empty = pa.array([], pa.string())
                self._tables[key] = pa.table({c: empty for c in ID_COLUMNS[table]})
        return self._tables[key]

    def vertices(self, vertex_type: str) -> pa.Table:
        return self.table("vertices", vertex_type)

    def edges(self, relation: RelationKey) -> pa.Table:
        return self.table("edges", relation.dotted)

    def edge_input(self, relation: RelationKey) -> pa.Table | Path:
        """The relation's edges as an engine input: the snapshot's Parquet file when the
        table is not in memory already (so an engine that scans files never loads it here)."""
        key = ("edges", relation.dotted)
        if key in self._present and key not in self._tables:
            return self.snapshot.file(*key)
        return self.table(*key)

    def rows(self, table: str, name: str) -> int:
        """A table's row count (0 if absent), without reading it."""
        return self.snapshot.rows(table, name) if self.has(table, name) else 0

    def value_kinds(self, table: str, name: str) -> dict[str, dict[str, int]]:
        return self.snapshot.value_kinds(table, name) if self.has(table, name) else {}

    def ill_typed(self, table: str, name: str) -> pa.Table | None:
        """The snapshot's ill-typed values of a table (IDs, property, raw), if any."""
        if not self.has(table, name):
            return None
        return self.memo(("ill", table, name), lambda: self.snapshot.ill_typed(table, name))

    def source_keys(self, table: str, name: str) -> list[str] | None:
        """The property keys the source held for a table, if the pull recorded them."""
        return self.snapshot.source_keys(table, name) if self.has(table, name) else None

    def property_columns(self, table: str, name: str) -> list[str]:
        """The table's property columns (every column but the IDs), in table order."""
        ids = ID_COLUMNS[table]
        if self.has(table, name) and (table, name) not in self._tables:
            return [c for c in self.snapshot.value_kinds(table, name) if c not in ids]
        return [c for c in self.table(table, name).column_names if c not in ids]

    def relation_spec(self, relation: RelationKey) -> RelationSpec | None:
        return next((r for r in self.spec.relations if r.key == relation), None)

    def property_spec(self, table: str, name: str, prop: str) -> PropertySpec | None:
        if table == "vertices":
            vt = self.spec.vertex_types.get(name)
            return vt.property(prop) if vt else None
        rel = self.relation_spec(RelationKey.parse(name))
        return next((p for p in rel.properties if p.name == prop), None) if rel else None

    def memo(self, key: tuple[Any, ...], compute: Callable[[], T]) -> T:
        """``compute()`` once per run for ``key`` (shared between rules)."""
        if key not in self._memo:
            self._memo[key] = compute()
        return self._memo[key]

    def id_records(self, table: str, name: str, rows: np.ndarray | pa.Array) -> pa.Table:
        """The ID columns of the given rows (indices) of a table."""
        source = self.table(table, name)
        return source.select(ID_COLUMNS[table]).take(rows)
