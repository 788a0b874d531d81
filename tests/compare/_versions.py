"""Two versions of a small graph, built into real bundles through the real pipeline stages."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pyarrow as pa

from graphmill.transform import build_bundle
from tests.transform._snapshots import publish, spec_document

KEEP_ALL = {"duplicates": "keep", "self_loops": "keep", "undirected": "as-is"}


def people_table(rows: dict[str, tuple[float | None, str | None]]) -> pa.Table:
    """vertex_id, score (float, may be null), colour (string, may be null)."""
    ids = sorted(rows)
    return pa.table(
        {
            "vertex_id": pa.array(ids, pa.string()),
            "score": pa.array([rows[i][0] for i in ids], pa.float64()),
            "colour": pa.array([rows[i][1] for i in ids], pa.string()),
        }
    )


def edge_table(edges: list[tuple[str, str]]) -> pa.Table:
    return pa.table(
        {
            "source_id": pa.array([s for s, _ in edges], pa.string()),
            "target_id": pa.array([t for _, t in edges], pa.string()),
        }
    )


def build_version(
    out: Path,
    people: dict[str, tuple[float | None, str | None]],
    places: list[str],
    knows: list[tuple[str, str]],
    visits: list[tuple[str, str]],
    checks_summary: dict[str, Any] | None = None,
    **extra: Any,
) -> Path:
    """Build a bundle of people (score, colour), places, people-knows-people and
    people-visits-places under ``out``; return the bundle folder."""
    document = spec_document(
        out,
        {
            "person": {"properties": {"score": {"kind": "float"}, "colour": {"kind": "string"}}},
            "place": {},
        },
        [
            {"from": "person", "name": "knows", "to": "person"},
            {"from": "person", "name": "visits", "to": "place"},
        ],
        **{"edges": KEEP_ALL, **extra},
    )
    tables = {
        "person": people_table(people),
        "place": pa.table({"vertex_id": pa.array(sorted(places), pa.string())}),
        "person.knows.person": edge_table(knows),
        "person.visits.place": edge_table(visits),
    }
    spec, snapshot = publish(document, tables)
    build_bundle(spec, snapshot, checks_summary=checks_summary)
    return spec.output.bundle


def snapshot_version(
    out: Path,
    people: list[tuple[str, float | None, str | None]],
    places: list[str],
    knows: list[tuple[str, str]],
    visits: list[tuple[str, str]],
    *,
    report: bool = False,
) -> Path:
    """Pull a snapshot of the same graph under ``out`` (people as rows: an ID may repeat);
    with ``report``, run the checks and write their report beside it. Returns its folder."""
    from graphmill.validate import run_checks

    document = spec_document(
        out,
        {
            "person": {"properties": {"score": {"kind": "float"}, "colour": {"kind": "string"}}},
            "place": {},
        },
        [
            {"from": "person", "name": "knows", "to": "person"},
            {"from": "person", "name": "visits", "to": "place"},
        ],
        edges=KEEP_ALL,
    )
    tables = {
        "person": pa.table(
            {
                "vertex_id": pa.array([p[0] for p in people], pa.string()),
                "score": pa.array([p[1] for p in people], pa.float64()),
                "colour": pa.array([p[2] for p in people], pa.string()),
            }
        ),
        "place": pa.table({"vertex_id": pa.array(places, pa.string())}),
        "person.knows.person": edge_table(knows),
        "person.visits.place": edge_table(visits),
    }
    spec, snapshot = publish(document, tables)
    if report:
        run_checks(spec, snapshot).write_json(spec.output.report)
    return spec.output.snapshot
