"""``compare_bundles``: two bundle folders in, a :class:`Comparison` out.

Contract: both bundles are verified (manifest self-hash and every file's sha256) unless
``verify=False``; vertices are matched by the ID column both bundles ship (original IDs, or
pseudonyms when both builds used the same key; anything else is refused with exit code 2).
Vertex types and relations present in only one bundle are reported whole as added or removed.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pyarrow as pa

from graphmill._version import __version__
from graphmill.bundle import read_manifest, verify_files
from graphmill.compare._drift import (
    categorical_drift,
    degree_drift,
    findings_drift,
    kind_of,
    label_drift,
    numeric_drift,
)
from graphmill.compare._edge_moves import edge_part_moves, edge_parts_table
from graphmill.compare._gate import evaluate, gate_summary
from graphmill.compare._result import COMPARISON_FORMAT, Comparison
from graphmill.compare._tables import (
    BundleSide,
    VertexMatch,
    column_values,
    comparable_properties,
    compare_edges,
    connect,
    match_vertices,
)
from graphmill.errors import InputError
from graphmill.spec import GateRule


def open_side(path: str | Path, *, verify: bool = True) -> BundleSide:
    root = Path(path)
    manifest = read_manifest(root, verify=verify)
    if verify:
        verify_files(root, manifest)
    return BundleSide(root, manifest)


def matching_column(old: BundleSide, new: BundleSide) -> str:
    """``vertex_id`` or ``pseudonym``; refuses bundles whose identities cannot be matched."""
    a, b = old.manifest["ids"], new.manifest["ids"]
    if a["pseudonymized"] != b["pseudonymized"]:
        raise InputError(
            "one bundle ships original IDs and the other pseudonyms: nothing can be matched",
            file=str(new.root if b["pseudonymized"] else old.root),
            hint="build both with the same ids.pseudonymize setting and key",
        )
    if a["pseudonymized"] and a.get("key_fingerprint") != b.get("key_fingerprint"):
        raise InputError(
            "the two bundles were pseudonymized with different keys (or one records no key "
            "fingerprint): their pseudonyms cannot be matched",
            file=str(new.root),
            hint="build both with the same key",
        )
    return "pseudonym" if a["pseudonymized"] else "vertex_id"


def compare_bundles(
    old: str | Path,
    new: str | Path,
    *,
    rules: dict[str, GateRule] | None = None,
    verify: bool = True,
) -> Comparison:
    """Compare bundle ``new`` with the earlier bundle ``old``; apply the drift ``rules``."""
    return compare_sides(open_side(old, verify=verify), open_side(new, verify=verify), rules=rules)


def compare_sides(
    old: BundleSide, new: BundleSide, *, rules: dict[str, GateRule] | None = None
) -> Comparison:
    matched_by = matching_column(old, new)
    con = connect()
    try:
        matches: dict[str, VertexMatch] = {}
        vertex_types = {}
        for vt in sorted(set(old.manifest["vertex_types"]) | set(new.manifest["vertex_types"])):
            vertex_types[vt] = _vertex_type(con, old, new, vt, matches)
    finally:
        con.close()
    relations = {
        dotted: _relation(old, new, dotted, matches)
        for dotted in sorted(set(old.manifest["relations"]) | set(new.manifest["relations"]))
    }
    doc: dict[str, Any] = {
        "comparison_format": COMPARISON_FORMAT,
        "graphmill_version": __version__,
        "old": _identity(old),
        "new": _identity(new),
        "matched_by": matched_by,
        "vertex_types": vertex_types,
        "relations": relations,
        "label": label_drift(old.manifest, new.manifest),
        "findings": findings_drift(old.manifest, new.manifest),
    }
    findings, evaluated = evaluate(doc, rules or {})
    doc["gate"] = gate_summary(findings, evaluated)
    maps = {vt: m.index_map for vt, m in matches.items()}
    return Comparison(doc, maps, evaluated)


def _identity(side: BundleSide) -> dict[str, Any]:
    m = side.manifest
    return {"name": m["name"], "bundle": str(side.root), "manifest_sha256": m["manifest_sha256"]}


def _whole(status: str, old: int, new: int) -> dict[str, Any]:
    return {"status": status, "old": old, "new": new, "kept": 0, "added": new, "removed": old}


def _vertex_type(
    con: Any, old: BundleSide, new: BundleSide, vt: str, matches: dict[str, VertexMatch]
) -> dict[str, Any]:
    in_old, in_new = vt in old.manifest["vertex_types"], vt in new.manifest["vertex_types"]
    if not (in_old and in_new):
        count = (old if in_old else new).manifest["vertex_types"][vt]["count"]
        status = "only-old" if in_old else "only-new"
        return {
            **_whole(status, count if in_old else 0, 0 if in_old else count),
            **_empty_details(),
        }
    m = matches[vt] = match_vertices(con, old, new, vt)
    numeric, categorical = {}, {}
    for prop in comparable_properties(old, new, vt):
        a, b = column_values(old.vertex_file(vt), prop), column_values(new.vertex_file(vt), prop)
        kind = kind_of(a.type)
        if kind == "numeric":
            numeric[prop] = numeric_drift(a, b)
        elif kind == "categorical":
            categorical[prop] = categorical_drift(a, b)
    old_props = set(old.manifest["vertex_types"][vt]["properties"])
    new_props = set(new.manifest["vertex_types"][vt]["properties"])
    moves = None
    if m.part_moves is not None:
        changed = sum(x["count"] for x in m.part_moves if x["from"] != x["to"])
        moves = {"changed": changed, "transitions": m.part_moves}
    return {
        "status": "both",
        "old": m.old_count,
        "new": m.new_count,
        "kept": m.kept,
        "added": m.new_count - m.kept,
        "removed": m.old_count - m.kept,
        "properties_added": sorted(new_props - old_props),
        "properties_removed": sorted(old_props - new_props),
        "values_changed": m.changed,
        "numeric_drift": numeric,
        "categorical_drift": categorical,
        "part_moves": moves,
    }


def _empty_details() -> dict[str, Any]:
    return {
        "properties_added": [],
        "properties_removed": [],
        "values_changed": {},
        "numeric_drift": {},
        "categorical_drift": {},
        "part_moves": None,
    }


def _relation(
    old: BundleSide, new: BundleSide, dotted: str, matches: dict[str, VertexMatch]
) -> dict[str, Any]:
    in_old, in_new = dotted in old.manifest["relations"], dotted in new.manifest["relations"]
    if not (in_old and in_new):
        count = (old if in_old else new).manifest["relations"][dotted]["count"]
        status = "only-old" if in_old else "only-new"
        return {
            **_whole(status, count if in_old else 0, 0 if in_old else count),
            "degree": {},
            "part_moves": None,
        }
    entry = new.manifest["relations"][dotted]
    src, dst = matches[entry["source_type"]], matches[entry["target_type"]]
    result = compare_edges(
        old.edge_file(dotted),
        new.edge_file(dotted),
        src.lookup(),
        dst.lookup(),
        (src.old_count, src.new_count, dst.old_count, dst.new_count),
    )
    old_table = edge_parts_table(old.manifest["relations"][dotted])
    new_table = edge_parts_table(entry)
    moves = None
    if old_table and new_table:
        moves = edge_part_moves(
            old.edge_file(dotted),
            new.edge_file(dotted),
            old.root / old_table,
            new.root / new_table,
            (src.lookup(), dst.lookup()),
            dst.new_count,
        )
    return {
        "status": "both",
        "old": result.old,
        "new": result.new,
        "kept": result.kept,
        "added": result.added,
        "removed": result.removed,
        "degree": {
            "out": degree_drift(result.old_out, result.new_out),
            "in": degree_drift(result.old_in, result.new_in),
        },
        "part_moves": moves,
    }


def index_map_table(comparison: Comparison, vertex_type: str) -> pa.Table:
    """old_index, new_index of the kept vertices of one type, sorted by old_index."""
    try:
        return comparison.index_maps[vertex_type]
    except KeyError:
        raise InputError(
            f"no vertex type {vertex_type!r} in both bundles",
            hint=f"kept types: {', '.join(sorted(comparison.index_maps)) or 'none'}",
        ) from None
