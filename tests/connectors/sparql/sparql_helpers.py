"""Spec builders shared by the SPARQL endpoint tests."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from graphmill.connectors import open_source
from graphmill.snapshot import pull
from graphmill.spec import PipelineSpec, spec_from_dict

EX = "http://e.test/"
FAST_RETRIES = {"attempts": 2, "initial_wait_s": 0.01, "max_wait_s": 0.05}


def small_spec_doc(
    source: dict[str, Any], out: Path, *, namespace: str = EX, **rdf: Any
) -> dict[str, Any]:
    """A spec with one vertex type (``ex:Thing``, properties ``label`` and ``size``) and one
    relation ``thing.linked.thing``; ``ex:`` stands for ``namespace``."""
    return {
        "spec_version": 1,
        "name": "small",
        "source": source,
        "rdf": {"prefixes": {"ex": namespace}, **rdf},
        "vertex_types": {
            "thing": {
                "match": "ex:Thing",
                "properties": {
                    "label": {"from": "ex:label", "multi": True},
                    "size": {"from": "ex:size"},
                },
            }
        },
        "relations": [{"from": "thing", "name": "linked", "to": "thing", "match": "ex:linked"}],
        "output": {"bundle": str(out / "bundle"), "snapshot": str(out / "snapshot")},
    }


def write_spec(path: Path, document: dict[str, Any]) -> Path:
    """Write a spec document as a file (JSON is YAML)."""
    path.write_text(json.dumps(document, indent=2), encoding="utf-8")
    return path


def endpoint(url: str, **options: Any) -> dict[str, Any]:
    return {"kind": "sparql-endpoint", "query_url": url, **options}


def pull_spec(document: dict[str, Any]) -> tuple[PipelineSpec, Any]:
    spec = spec_from_dict(document)
    return spec, pull(spec, open_source(spec))


def snapshot_files(root: Path) -> dict[str, bytes]:
    """The bytes of every Parquet table of a snapshot, by relative path."""
    return {str(p.relative_to(root)): p.read_bytes() for p in sorted(root.rglob("*.parquet"))}
