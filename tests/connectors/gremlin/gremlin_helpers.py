"""Helpers of the gremlin source tests: specs, writing graphs into a server, file digests."""

from __future__ import annotations

import concurrent.futures
from pathlib import Path
from typing import Any

from gremlin_python.driver.client import Client
from gremlin_python.process.graph_traversal import GraphTraversalSource
from gremlin_python.process.traversal import Direction, T, TraversalStrategies
from gremlin_python.structure.graph import Graph

from graphmill._atomic import sha256_file
from graphmill.spec import PipelineSpec, spec_from_dict

# TinkerPop reference documentation, "The Graph" / toy graphs: the "modern" graph has
# person (name, age) and software (name, lang) vertices, knows and created edges (weight).
MODERN_TYPES: dict[str, Any] = {
    "person": {"properties": {"name": {"kind": "string"}, "age": {"kind": "integer"}}},
    "software": {"properties": {"name": {"kind": "string"}, "lang": {"kind": "string"}}},
}
MODERN_RELATIONS: list[dict[str, Any]] = [
    {"from": "person", "name": "knows", "to": "person", "properties": {"weight": {}}},
    {"from": "person", "name": "created", "to": "software", "properties": {"weight": {}}},
]
# TinkerPop documentation, Grateful Dead data set: song (name, songType, performances) and
# artist (name) vertices; followedBy (weight) song->song, sungBy and writtenBy song->artist.
DEAD_TYPES: dict[str, Any] = {
    "song": {"properties": {"name": {}, "song_type": {"from": "songType"}, "performances": {}}},
    "artist": {"properties": {"name": {}}},
}
DEAD_RELATIONS: list[dict[str, Any]] = [
    {"from": "song", "name": "followedBy", "to": "song", "properties": {"weight": {}}},
    {"from": "song", "name": "sungBy", "to": "artist"},
    {"from": "song", "name": "writtenBy", "to": "artist"},
]


def gremlin_spec(
    folder: Path,
    url: str,
    vertex_types: dict[str, Any],
    relations: list[dict[str, Any]],
    *,
    name: str = "graph",
    **source: Any,
) -> PipelineSpec:
    """A spec reading ``url`` into ``folder/out`` (snapshot, bundle, report)."""
    document = {
        "spec_version": 1,
        "name": name,
        "source": {"kind": "gremlin", "url": url, **source},
        "vertex_types": vertex_types,
        "relations": relations,
        "output": {"bundle": str(folder / "out" / "bundle")},
    }
    return spec_from_dict(document, base_dir=folder)


def digests(folder: Path) -> dict[str, str]:
    """sha256 of every file under ``folder``, by relative path."""
    return {
        str(p.relative_to(folder)): sha256_file(p) for p in sorted(folder.rglob("*")) if p.is_file()
    }


def _g() -> GraphTraversalSource:
    return GraphTraversalSource(Graph(), TraversalStrategies())


def write_graph(
    url: str,
    vertices: list[dict[Any, Any]],
    edges: list[dict[Any, Any]],
    *,
    traversal_source: str = "g",
    chunk: int = 5000,
    **client_options: Any,
) -> None:
    """Write vertices then edges through Gremlin bytecode: ``inject(maps).unfold().mergeV()``
    (maps with ``T.id``, ``T.label`` and properties) and ``mergeE()`` (maps with ``T.id``,
    ``T.label``, ``Direction.OUT``/``Direction.IN`` ids and properties), in chunks."""

    def run() -> None:
        client = Client(url, traversal_source, **client_options)
        try:
            for rows, step in ((vertices, "merge_v"), (edges, "merge_e")):
                for start in range(0, len(rows), chunk):
                    part = rows[start : start + chunk]
                    traversal = getattr(_g().inject(part).unfold(), step)().count()
                    client.submit(traversal.bytecode).all().result()
        finally:
            client.close()

    with concurrent.futures.ThreadPoolExecutor(max_workers=1) as pool:
        pool.submit(run).result()


def drop_labels(url: str, labels: list[str], **client_options: Any) -> None:
    """Remove the vertices (and so their edges) of ``labels`` from ``g``."""

    def run() -> None:
        client = Client(url, "g", **client_options)
        try:
            traversal = _g().V().has_label(*labels).drop()
            client.submit(traversal.bytecode).all().result()
        finally:
            client.close()

    with concurrent.futures.ThreadPoolExecutor(max_workers=1) as pool:
        pool.submit(run).result()


def vertex(vid: Any, label: str, **props: Any) -> dict[Any, Any]:
    return {T.id: vid, T.label: label, **props}


def edge(eid: Any, label: str, out_id: Any, in_id: Any, **props: Any) -> dict[Any, Any]:
    return {T.id: eid, T.label: label, Direction.OUT: out_id, Direction.IN: in_id, **props}
