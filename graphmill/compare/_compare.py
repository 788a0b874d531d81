"""``compare_bundles``: two bundle folders in, a :class:`Comparison` out.

Contract: both bundles are verified (manifest self-hash and every file's sha256) unless
``verify=False``: each file the comparison reads is hashed from the very bytes it parses, on
worker threads while the comparison runs, the others are hashed from disk beside it, and no
result is returned before every hash matched (else :class:`BundleIntegrityError`, exit 8);
vertices are matched by the ID column both bundles ship (original IDs, or
pseudonyms when both builds used the same key; anything else is refused with exit code 2).
Vertex types and relations present in only one bundle are reported whole as added or removed.
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from pathlib import Path
from typing import Any

import pyarrow as pa

from graphmill._version import __version__
from graphmill.bundle import MANIFEST_FILE, read_manifest, verify_files
from graphmill.compare._drift import (
    categorical_drift,
    findings_drift,
    kind_of,
    label_drift,
    numeric_drift,
)
from graphmill.compare._files import SideFiles, shared_pool
from graphmill.compare._gate import evaluate, gate_summary
from graphmill.compare._relations import bundle_relation, whole
from graphmill.compare._result import COMPARISON_FORMAT, Comparison
from graphmill.compare._tables import (
    BundleSide,
    VertexMatch,
    comparable_properties,
    connect,
    match_vertices,
)
from graphmill.errors import InputError
from graphmill.snapshot import SNAPSHOT_FILE
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


WORKERS = 2  # vertex types (then relations) compared at once
READ_BY_COMPARISON = ("tables/vertices/", "tables/edges/", "tables/parts/", "tables/edge_parts/")


def compare_bundles(
    old: str | Path,
    new: str | Path,
    *,
    rules: dict[str, GateRule] | None = None,
    verify: bool = True,
) -> Comparison:
    """Compare ``new`` with the earlier ``old`` and apply the drift ``rules``: two bundle
    folders, or two snapshot folders (see ``_snapshots.py`` for what snapshots compare)."""
    roots = Path(old), Path(new)
    kinds = [side_kind(root) for root in roots]
    if kinds[0] != kinds[1]:
        raise InputError(
            f"is a {kinds[1]}, but {roots[0]} is a {kinds[0]}: nothing to compare",
            file=str(roots[1]),
            hint="compare two bundles (what build writes) or two snapshots (what pull writes)",
        )
    with shared_pool() as pool:
        if kinds[0] == "snapshot":
            from graphmill.compare._snapshots import compare_snapshot_sides, open_snapshot_side

            sides: list[BundleSide] = [open_snapshot_side(r, verify, pool) for r in roots]
            run: Any = compare_snapshot_sides
        else:
            sides, run = [_side(r, verify, pool) for r in roots], compare_sides
        try:
            result: Comparison = run(*sides, rules=rules)
        except Exception:
            for side in sides:  # a tampered file explains a failure better than its symptom
                side.files.settle()
            raise
        for side in sides:
            side.files.settle()
    return result


def side_kind(root: Path) -> str:
    """``snapshot`` for a folder with ``snapshot.json`` and no manifest, else ``bundle``."""
    if (root / SNAPSHOT_FILE).is_file() and not (root / MANIFEST_FILE).is_file():
        return "snapshot"
    return "bundle"


def _side(root: Path, verify: bool, pool: ThreadPoolExecutor) -> BundleSide:
    manifest = read_manifest(root, verify=verify)
    expected = {e["path"]: (e["bytes"], e["sha256"]) for e in manifest["files"]}
    files = SideFiles(root, expected, verify=verify, pool=pool)
    files.hash_unread(READ_BY_COMPARISON)
    return BundleSide(root, manifest, files)


def compare_sides(
    old: BundleSide, new: BundleSide, *, rules: dict[str, GateRule] | None = None
) -> Comparison:
    matched_by = matching_column(old, new)
    dotted = sorted(set(old.manifest["relations"]) | set(new.manifest["relations"]))
    con = connect()
    # Types, then relations, side by side on worker threads: Parquet decoding, DuckDB and
    # numpy's sorts and gathers run without the GIL, and each type or relation stands alone.
    try:
        with ThreadPoolExecutor(WORKERS, thread_name_prefix="gm-compare") as pool:
            vertex_types, matches = compare_vertex_types(pool, con, old, new)
            compared = pool.map(lambda r: bundle_relation(old, new, r, matches), dotted)
            relations = dict(zip(dotted, compared, strict=True))
    finally:
        con.close()
    doc: dict[str, Any] = {
        "comparison_format": COMPARISON_FORMAT,
        "compared": "bundles",
        "graphmill_version": __version__,
        "old": _identity(old),
        "new": _identity(new),
        "matched_by": matched_by,
        "vertex_types": vertex_types,
        "relations": relations,
        "label": label_drift(old.manifest, new.manifest),
        "findings": findings_drift(old.manifest, new.manifest),
    }
    return judged(doc, rules, {vt: m.index_map for vt, m in matches.items()})


def compare_vertex_types(
    pool: ThreadPoolExecutor, con: Any, old: BundleSide, new: BundleSide
) -> tuple[dict[str, Any], dict[str, VertexMatch]]:
    """Every vertex type's entry, and the matches of the types both sides have."""
    kinds = sorted(set(old.manifest["vertex_types"]) | set(new.manifest["vertex_types"]))
    done = list(pool.map(lambda vt: _vertex_type(con, old, new, vt), kinds))
    entries = {vt: entry for vt, (entry, _) in zip(kinds, done, strict=True)}
    return entries, {vt: m for vt, (_, m) in zip(kinds, done, strict=True) if m is not None}


def judged(
    doc: dict[str, Any], rules: dict[str, GateRule] | None, maps: dict[str, pa.Table]
) -> Comparison:
    """The comparison ``doc`` with the drift gate's verdict on it."""
    findings, evaluated = evaluate(doc, rules or {})
    doc["gate"] = gate_summary(findings, evaluated)
    return Comparison(doc, maps, evaluated)


def _identity(side: BundleSide) -> dict[str, Any]:
    m = side.manifest
    return {"name": m["name"], "bundle": str(side.root), "manifest_sha256": m["manifest_sha256"]}


def _vertex_type(
    con: Any, old: BundleSide, new: BundleSide, vt: str
) -> tuple[dict[str, Any], VertexMatch | None]:
    """The type's entry, and how its vertices match (None for a type on one side only)."""
    in_old, in_new = vt in old.manifest["vertex_types"], vt in new.manifest["vertex_types"]
    if not (in_old and in_new):
        count = (old if in_old else new).manifest["vertex_types"][vt]["count"]
        status = "only-old" if in_old else "only-new"
        entry = whole(status, count if in_old else 0, 0 if in_old else count)
        return {**entry, **_empty_details()}, None
    tables = old.vertices(vt), new.vertices(vt)
    shared = comparable_properties(old, (tables[0].schema, tables[1].schema), vt)
    cursor = con.cursor()  # one per thread
    try:
        m = match_vertices(cursor, old, new, vt, tables, shared)
    finally:
        cursor.close()
    numeric, categorical = {}, {}
    for prop in shared:
        a, b = tables[0].column(prop), tables[1].column(prop)
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
    }, m


def _empty_details() -> dict[str, Any]:
    return {
        "properties_added": [],
        "properties_removed": [],
        "values_changed": {},
        "numeric_drift": {},
        "categorical_drift": {},
        "part_moves": None,
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
