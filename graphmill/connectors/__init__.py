"""Sources by name, imported only when used.

Third-party sources register through the ``graphmill.sources`` entry-point group with a
value of the form ``"package.module:ClassName"``.
"""

from __future__ import annotations

import importlib
from importlib.metadata import entry_points

from graphmill.connectors.base import GraphSource
from graphmill.errors import MissingExtraError, SpecError
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
    kinds = set(BUILTIN_SOURCES)
    kinds.update(ep.name for ep in entry_points(group=ENTRY_POINT_GROUP))
    return sorted(kinds)


def source_class(kind: str) -> type[GraphSource]:
    """The class for ``kind``; a clear error if unknown or if its extra is missing."""
    target, extra = BUILTIN_SOURCES.get(kind, ("", ""))
    if not target:
        found = [ep for ep in entry_points(group=ENTRY_POINT_GROUP) if ep.name == kind]
        if not found:
            raise SpecError(
                f"unknown source kind {kind!r}",
                key_path="source.kind",
                hint=f"use one of: {', '.join(available_kinds())}",
            )
        target = found[0].value
    module_name, _, class_name = target.partition(":")
    try:
        module = importlib.import_module(module_name)
    except ImportError as exc:
        if (exc.name or "").startswith("graphmill"):
            raise MissingExtraError(
                f"source kind {kind!r} is not part of this installation ({exc.name} is missing)"
            ) from exc
        hint = f"install it with: pip install 'graphmill[{extra}]'" if extra else None
        raise MissingExtraError(
            f"source kind {kind!r} needs a package that is not installed ({exc.name})",
            hint=hint,
        ) from exc
    cls: type[GraphSource] = getattr(module, class_name)
    return cls


def open_source(spec: PipelineSpec) -> GraphSource:
    """Instantiate the spec's source (not yet opened)."""
    return source_class(spec.source_kind)(spec)


__all__ = ["BUILTIN_SOURCES", "available_kinds", "open_source", "source_class"]
