"""The contract every source implements.

A source turns a spec into *work units* (one per vertex type or relation, optionally split
into partitions) and reads each unit as a stream of :class:`Page` objects. Each page holds an
Arrow record batch in the snapshot's column convention:

* vertex pages: ``vertex_id`` (string, not null), then one column per declared property,
  named by the spec's property name;
* edge pages: ``source_id`` and ``target_id`` (strings, not null), then edge properties.

A page may carry a ``cursor``: an opaque string from which :meth:`GraphSource.read` can
resume *after* that page. The stager persists pages and cursors, so a source that sets
``can_resume`` never re-reads what was already staged. Page schemas may differ between pages
(the stager unifies them); a page whose column holds values of several kinds rendered as
strings reports them in ``value_kinds``.

**Ill-typed values**: a value that cannot be read as the kind it must have (its declared
``kind``; for RDF literals, their datatype) is null in its column, counted under the kind
``ill-typed`` in ``value_kinds``, and its text is kept in ``raw``: per property, a string
array aligned with the batch's rows, holding the source's text of each ill-typed value (null
elsewhere). Every source applies a declared ``kind`` this way (integers are accepted where
``float`` is declared), so one defect reads the same from every source.

**Property facets** (for sources that hold facts rather than rows, such as RDF): a source may
split a vertex type into one *membership* unit (``facet=None``; pages hold ``vertex_id`` only)
and one unit per property (``facet="age"``; pages hold ``vertex_id`` and ``age``, one value
per row, in any order, a vertex on several rows when it has several values). The snapshot
joins them into one row per vertex: values of a ``multi`` property become a sorted list; of a
single-valued one, the smallest value is kept and the number of vertices that had more is
recorded as a snapshot warning. Vertices without membership rows are not created.

**Fingerprints**: :meth:`GraphSource.fingerprint` describes what a unit reads (files: size,
modification time, sha256; servers: counts and key digests). The stager records it in the
unit's checkpoint; a resumed pull whose fingerprint differs restarts that unit.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, ClassVar, Literal

import pyarrow as pa

from graphmill._progress import Progress, SilentProgress
from graphmill.spec import PipelineSpec, RelationKey

if TYPE_CHECKING:
    from graphmill.engine import FileScan

VERTEX_ID = "vertex_id"
#: staged part columns holding ``Page.raw`` are named RAW_PREFIX + property name
RAW_PREFIX = "graphmill.raw:"
#: staged part columns holding ``Page.identity`` are named IDENTITY_PREFIX + property name
IDENTITY_PREFIX = "graphmill.identity:"
SOURCE_ID = "source_id"
TARGET_ID = "target_id"


@dataclass(frozen=True)
class SourceCapabilities:
    """What a source can do; the pipeline plans from these flags."""

    can_resume: bool = False
    can_partition: bool = False
    knows_schema: bool = False
    max_concurrency: int = 1


@dataclass(frozen=True)
class WorkUnit:
    """One independently readable piece: a vertex type or relation, one partition of it."""

    table: Literal["vertices", "edges"]
    name: str  # vertex type name, or RelationKey.dotted
    partition: int = 0
    partitions: int = 1
    facet: str | None = None  # a property name: see "property facets" in the module doc

    @property
    def unit_id(self) -> str:
        facet = f".{self.facet}" if self.facet else ""
        return f"{self.table}.{self.name}{facet}.p{self.partition:03d}of{self.partitions:03d}"

    @property
    def relation(self) -> RelationKey:
        return RelationKey.parse(self.name)


@dataclass
class Page:
    batch: pa.RecordBatch
    cursor: str | None = None
    value_kinds: dict[str, dict[str, int]] | None = None
    raw: dict[str, pa.Array] | None = None  # property -> text of its ill-typed values
    #: property facet -> each row's value identity (``kind``, U+001F, identity): the
    #: snapshot keeps one row per vertex and identity across all of a unit's pages
    identity: dict[str, pa.Array] | None = None


@dataclass
class Provenance:
    """Where the data came from, safe to publish: no credentials, no secrets."""

    kind: str
    location: str
    queries: list[str] = field(default_factory=list)
    details: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "location": self.location,
            "queries": list(self.queries),
            "details": dict(self.details),
        }


class GraphSource(ABC):
    """Base class of every source. Subclasses set ``kind`` and ``capabilities``."""

    kind: ClassVar[str]
    capabilities: ClassVar[SourceCapabilities] = SourceCapabilities()
    #: where a source may report long work of its own (parsing, loading); set by the pipeline
    progress: Progress = SilentProgress()

    def __init__(self, spec: PipelineSpec) -> None:
        self.spec = spec

    def plan(self) -> list[WorkUnit]:
        """Work units, in a stable order. Default: one per vertex type and relation."""
        units = [WorkUnit("vertices", name) for name in self.spec.vertex_types]
        units += [WorkUnit("edges", rel.key.dotted) for rel in self.spec.relations]
        return units

    @abstractmethod
    def read(self, unit: WorkUnit, cursor: str | None = None) -> Iterator[Page]:
        """Yield the unit's pages, starting after ``cursor`` when one is given."""

    @abstractmethod
    def provenance(self) -> Provenance:
        """A publishable description of the source and the queries it ran."""

    def fingerprint(self, unit: WorkUnit) -> dict[str, Any] | None:
        """What ``unit`` reads, as a small JSON-able dict, or None if the source cannot tell.

        Called (after :meth:`open`) before a unit is staged and again when a pull resumes: a
        different answer means the input changed, and the staged pages of the unit are
        discarded. It must be cheap next to reading the unit, and equal for unchanged input
        (see :mod:`graphmill.connectors._fingerprints`).
        """
        return None

    def property_keys(self, unit: WorkUnit) -> list[str] | None:
        """The property keys the source holds for ``unit``'s vertex type or relation (table
        columns, RDF predicates of its subjects, Gremlin property keys of its label), at most
        a few hundred, sorted; None if the source cannot tell. Called, while the source is
        open, only for tables where a declared property has no value at all, so that the
        check can suggest the key the spec probably meant."""
        return None

    def scans(self, unit: WorkUnit) -> tuple[list[FileScan], pa.Schema] | None:
        """The input files ``unit`` reads, as :class:`~graphmill.engine.FileScan` s that give
        exactly its staged rows, and the snapshot schema; None (the default) when the unit
        must be read page by page. An engine that reads input files itself then writes the
        snapshot table straight from them, with no staged copy (see
        :mod:`graphmill.connectors._table_scans`)."""
        return None

    def discover(self) -> dict[str, Any] | None:
        """Optional schema discovery (labels, keys, observed value types)."""
        return None

    def open(self) -> None:  # noqa: B027 - optional hook
        """Connect or load; called once before the first ``read``."""

    def close(self) -> None:  # noqa: B027 - optional hook
        """Release connections and temporary stores."""

    def __enter__(self) -> GraphSource:
        self.open()
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()
