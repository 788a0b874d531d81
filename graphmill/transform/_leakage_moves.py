"""The ``part-changed-since-previous`` rule: kept vertices and edges that changed part.

Contract: evaluated when a build is told an earlier bundle (``drift_gate.previous`` or
``--previous``), on the comparison the build already makes with it
(:func:`graphmill.compare._compare.compare_sides`: vertices matched by ID, edges by their
ends' IDs, copies of a pair by order). Per vertex type with parts and per relation with edge
parts in both bundles, a finding counts the kept items that were in a part (train,
validation, test) in both bundles and are now in another one, out of all such items; items
that entered or left every part (a new or lost target) are not moves. The sample lists the
moves as ``from`` / ``to`` / ``count``. :func:`add_part_moves` merges the findings into the
sealed manifest's ``leakage`` entry and reseals it.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from graphmill.bundle import MANIFEST_FILE, seal_manifest
from graphmill.spec import PipelineSpec
from graphmill.transform._leakage import LEAKAGE_RULES
from graphmill.transform._leakage_audit import leakage_entry, severities

RULE = "part-changed-since-previous"
PARTS = ("train", "validation", "test")


def part_move_findings(document: dict[str, Any], severity: str) -> list[dict[str, Any]]:
    """The findings of :data:`RULE` in a comparison document (``off``: none)."""
    if severity == "off":
        return []
    found = []
    for kind, section in (("vertex_type", "vertex_types"), ("relation", "relations")):
        for name, entry in sorted(document[section].items()):
            moves = entry.get("part_moves")
            if not moves:
                continue
            both = [t for t in moves["transitions"] if t["from"] in PARTS and t["to"] in PARTS]
            moved = [t for t in both if t["from"] != t["to"]]
            count, of = sum(t["count"] for t in moved), sum(t["count"] for t in both)
            if count == 0:
                continue
            items = "vertices" if kind == "vertex_type" else "edges"
            found.append(
                {
                    "rule": RULE,
                    "severity": severity,
                    "subject": {kind: name},
                    "count": count,
                    "denominator": of,
                    "sample": [dict(t) for t in moved],
                    "message": f"{name}: {count} of {of} kept {items} "
                    f"in a part moved to another part since {document['old']['bundle']}: "
                    + LEAKAGE_RULES[RULE][1],
                }
            )
    return found


def add_part_moves(
    scratch: Path, sealed: dict[str, Any], document: dict[str, Any], spec: PipelineSpec
) -> tuple[dict[str, Any], list[dict[str, Any]]]:
    """Merge the rule's findings into the manifest written in ``scratch``; return the new
    manifest and the new findings."""
    from graphmill._schemas import validate_document

    severity = severities(spec)
    new = part_move_findings(document, severity[RULE])
    before = sealed.get("leakage")
    if before is None and not new:
        return sealed, new  # nothing else audited and nothing moved: no entry to add
    entry = leakage_entry(severity, (before["findings"] if before else []) + new)
    data = seal_manifest({**sealed, "leakage": entry})
    manifest = json.loads(data)
    validate_document("manifest", manifest)
    (scratch / MANIFEST_FILE).write_bytes(data)
    return manifest, new
