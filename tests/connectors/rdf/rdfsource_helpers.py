"""Helpers for the RDF source tests: build a spec around some files and pull it."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from graphmill.connectors import open_source
from graphmill.snapshot import Snapshot, pull
from graphmill.spec import PipelineSpec, spec_from_dict

EX = "http://example.org/"
KINDS = ("rdf-file", "rdf-store")


def rdf_spec(
    root: Path,
    kind: str,
    paths: list[str],
    vertex_types: dict[str, Any],
    relations: list[dict[str, Any]] | None = None,
    out: str | None = None,
    **rdf: Any,
) -> PipelineSpec:
    """A spec reading ``paths`` (relative to ``root``) with prefix ``ex:`` declared."""
    document = {
        "spec_version": 1,
        "source": {"kind": kind, "paths": paths},
        "rdf": {"prefixes": {"ex": EX}, **rdf},
        "vertex_types": vertex_types,
        "relations": relations or [],
        "output": {"bundle": str(root / (out or kind) / "bundle")},
    }
    return spec_from_dict(document, base_dir=root)


def pull_snapshot(spec: PipelineSpec, **source_options: Any) -> Snapshot:
    """Pull ``spec`` through its source (options go to the source's constructor)."""
    source = open_source(spec)
    for name, value in source_options.items():
        setattr(source, name, value)
    pull(spec, source)
    return Snapshot.open(spec.output.snapshot)


def tables(snapshot: Snapshot) -> dict[str, list[dict[str, Any]]]:
    """Every table of a snapshot as rows."""
    out = {vt: snapshot.vertices(vt).to_pylist() for vt in snapshot.vertex_types}
    out.update({r.dotted: snapshot.edges(r).to_pylist() for r in snapshot.relations})
    return out


def table_hashes(snapshot: Snapshot) -> dict[str, str]:
    """The sha256 of each table file, as snapshot.json records (and Snapshot.open checked)."""
    return {t["name"]: t["sha256"] for t in snapshot.document["tables"]}
