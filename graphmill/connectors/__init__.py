"""Sources by name, imported only when used.

Third-party sources register through the ``graphmill.sources`` entry-point group with a
value of the form ``"package.module:ClassName"``.
"""

from __future__ import annotations

from graphmill._plugins import available, load_class
from graphmill.connectors.base import GraphSource
from graphmill.spec import PipelineSpec

#: kind -> (import path, extra that provides its dependencies)
BUILTIN_SOURCES: dict[str, tuple[str, str]] = {
    "rdf-file": ("graphmill.connectors.rdf.dump:RdfFileSource", "rdf"),
    "rdf-store": ("graphmill.connectors.rdf.embedded:EmbeddedStoreSource", "rdf"),
    "table-files": ("graphmill.connectors.tables:TableFilesSource", ""),
    "gremlin": ("graphmill.connectors.gremlin:GremlinSource", "gremlin"),
    "sparql-endpoint": ("graphmill.connectors.sparql:SparqlEndpointSource", "sparql"),
}

ENTRY_POINT_GROUP = "graphmill.sources"


def available_kinds() -> list[str]:
    """Every source kind known: built in and registered by installed packages."""
    return available(BUILTIN_SOURCES, ENTRY_POINT_GROUP)


def source_class(kind: str) -> type[GraphSource]:
    """The class for ``kind``; a clear error if unknown or if its extra is missing."""
    cls: type[GraphSource] = load_class(
        kind, BUILTIN_SOURCES, ENTRY_POINT_GROUP, what="source kind", key_path="source.kind"
    )
    return cls


def open_source(spec: PipelineSpec) -> GraphSource:
    """Instantiate the spec's source (not yet opened)."""
    return source_class(spec.source_kind)(spec)


__all__ = ["BUILTIN_SOURCES", "available_kinds", "open_source", "source_class"]
