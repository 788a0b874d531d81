"""Comparing two snapshots (what ``pull`` staged), before anything is built.

Contract: vertices are matched by original ID; a snapshot may list an ID more than once (the
``duplicate-vertex-id`` check flags it), so each type counts distinct IDs and compares the
values of the first row of each ID, as a build keeps it. Edges are multisets of (source ID,
target ID) pairs, dangling ends included; degrees count edges at the type's vertices.
Numeric and categorical drift are those of bundles. Check findings come from the reports
``check`` wrote beside the snapshots (``<snapshot>.report.json``) when both are there and
describe these tables (same row counts); otherwise ``findings`` is null. Labels, parts and
index maps belong to builds: they are null or absent here. Every file listed in
``snapshot.json`` is verified as for bundles.
"""

from __future__ import annotations

import json
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill._version import __version__
from graphmill.compare._drift import degree_drift, findings_drift
from graphmill.compare._files import SideFiles
from graphmill.compare._relations import one_side_relation
from graphmill.compare._result import Comparison
from graphmill.compare._tables import BundleSide, connect
from graphmill.connectors.base import SOURCE_ID, TARGET_ID, VERTEX_ID
from graphmill.errors import BundleIntegrityError
from graphmill.spec import GateRule, RelationKey
from graphmill.transform._indexing import first_rows_by_id

SNAPSHOT_FILE = "snapshot.json"


class SnapshotSide(BundleSide):
    """One snapshot being compared, dressed as a bundle side: ``manifest`` is built from
    ``snapshot.json`` (tables, columns, row counts; no parts), vertex tables come
    deduplicated by ID with an ``index`` column (position among the distinct IDs)."""

    def __init__(self, root: Path, document: dict[str, Any], files: SideFiles) -> None:
        self.document = document
        super().__init__(root, _as_manifest(root, document), files)
        self._ids: dict[str, pa.ChunkedArray] = {}

    def parts_file(self, vertex_type: str) -> str | None:
        return None

    def vertices(self, vertex_type: str) -> pa.Table:
        table = self.files.table(self.vertex_file(vertex_type))
        table = table.take(pa.array(first_rows_by_id(table.column(VERTEX_ID))))
        self._ids[vertex_type] = table.column(VERTEX_ID)
        return table.append_column("index", pa.array(np.arange(table.num_rows)))

    def ids(self, vertex_type: str) -> pa.ChunkedArray:
        """The type's distinct IDs, in index order (read when not read yet)."""
        if vertex_type not in self._ids:
            self.vertices(vertex_type)
        return self._ids[vertex_type]


def _as_manifest(root: Path, document: dict[str, Any]) -> dict[str, Any]:
    vertex_types, relations = {}, {}
    for t in document["tables"]:
        columns = [c["name"] for c in t["columns"]]
        if t["kind"] == "vertices":
            vertex_types[t["name"]] = {
                "table": t["file"],
                "count": t["rows"],  # rows; distinct IDs are counted when read
                "id_column": VERTEX_ID,
                "properties": [c for c in columns if c != VERTEX_ID],
            }
        else:
            key = RelationKey.parse(t["name"])
            relations[t["name"]] = {
                "table": t["file"],
                "count": t["rows"],
                "source_type": key.source_type,
                "target_type": key.target_type,
            }
    report = _report(root, document)
    return {
        "name": document["name"],
        "ids": {"pseudonymized": False},
        "vertex_types": vertex_types,
        "relations": relations,
        "validation": report,
    }


def _report(root: Path, document: dict[str, Any]) -> dict[str, Any] | None:
    """The findings of the check report beside the snapshot, if it describes these tables."""
    path = Path(f"{root}.report.json")
    if not path.is_file():
        return None
    try:
        report = json.loads(path.read_text(encoding="utf-8"))
        tables = report["snapshot"]["tables"]
        rows = {(t["kind"], t["name"]): t["rows"] for t in document["tables"]}
        counted = {("vertices", k): v for k, v in tables["vertices"].items()}
        counted.update({("edges", k): v for k, v in tables["edges"].items()})
        if counted != rows:
            return None  # a report of an earlier pull
        findings = [
            {k: f[k] for k in ("rule", "subject", "severity", "count")} for f in report["findings"]
        ]
    except (ValueError, KeyError, TypeError):
        return None
    return {"findings": findings}


def open_snapshot_side(root: Path, verify: bool, pool: ThreadPoolExecutor) -> SnapshotSide:
    path = root / SNAPSHOT_FILE
    try:
        document = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        raise BundleIntegrityError(
            f"snapshot.json cannot be read ({exc})", file=str(path), hint="pull again"
        ) from None
    from graphmill._schemas import validate_document

    validate_document("snapshot", document)
    expected: dict[str, tuple[int | None, str]] = {}
    for t in document["tables"]:
        expected[t["file"]] = (None, t["sha256"])
        if "ill_typed" in t:
            expected[t["ill_typed"]["file"]] = (None, t["ill_typed"]["sha256"])
    files = SideFiles(
        root, expected, verify=verify, pool=pool, hint="pull again", what="snapshot.json"
    )
    files.hash_unread([t["file"] for t in document["tables"]])
    return SnapshotSide(root, document, files)


def compare_snapshot_edges(
    con: Any, old: SnapshotSide, new: SnapshotSide, dotted: str
) -> dict[str, Any]:
    """Counts and degree drift of one relation in both snapshots."""
    tables = [
        s.files.table(s.edge_file(dotted), columns=[SOURCE_ID, TARGET_ID]) for s in (old, new)
    ]
    name = dotted.replace(".", "_")
    cursor = con.cursor()
    try:
        for side, table in zip(("old", "new"), tables, strict=True):
            cursor.register(f"gm_{side}_{name}", table)
        pairs = f"SELECT {SOURCE_ID}, {TARGET_ID}, count(*) AS n FROM gm_{{}}_{name} GROUP BY ALL"
        kept = cursor.sql(
            f"SELECT coalesce(sum(least(o.n, w.n)), 0) FROM ({pairs.format('old')}) o "
            f"JOIN ({pairs.format('new')}) w USING ({SOURCE_ID}, {TARGET_ID})"
        ).fetchall()[0][0]
    finally:
        cursor.close()
    key = RelationKey.parse(dotted)
    degree = {}
    for label, column, vt in (
        ("out", SOURCE_ID, key.source_type),
        ("in", TARGET_ID, key.target_type),
    ):
        a, b = (
            _degrees(t.column(column), s.ids(vt)) for t, s in zip(tables, (old, new), strict=True)
        )
        degree[label] = degree_drift(a, b)
    n_old, n_new, kept = tables[0].num_rows, tables[1].num_rows, int(kept)
    return {
        "status": "both",
        "old": n_old,
        "new": n_new,
        "kept": kept,
        "added": n_new - kept,
        "removed": n_old - kept,
        "degree": degree,
        "part_moves": None,
    }


def _degrees(ends: pa.ChunkedArray, ids: pa.ChunkedArray) -> np.ndarray:
    """Edges at each of the distinct ``ids`` (dangling ends left out)."""
    found = pc.index_in(ends, value_set=ids.combine_chunks())
    at = pc.fill_null(found, -1).to_numpy().astype(np.int64, copy=False)
    return np.bincount(at[at >= 0], minlength=len(ids))


def count_distinct_ids(old: SnapshotSide, new: SnapshotSide) -> None:
    """Put the distinct ID count of each type only one side has into its ``manifest``."""
    for side, other in ((old, new), (new, old)):
        for vt, entry in side.manifest["vertex_types"].items():
            if vt not in other.manifest["vertex_types"]:
                entry["count"] = len(side.ids(vt))


def compare_snapshot_sides(
    old: SnapshotSide, new: SnapshotSide, *, rules: dict[str, GateRule] | None = None
) -> Comparison:
    """The comparison document of two snapshots (``compared: snapshots``), judged."""
    from graphmill.compare._compare import COMPARISON_FORMAT, compare_vertex_types, judged

    count_distinct_ids(old, new)
    con = connect()
    try:
        with ThreadPoolExecutor(2, thread_name_prefix="gm-compare") as pool:
            vertex_types, _ = compare_vertex_types(pool, con, old, new)
            relations = {}
            for dotted in sorted(set(old.manifest["relations"]) | set(new.manifest["relations"])):
                relations[dotted] = _relation(con, old, new, dotted)
    finally:
        con.close()
    reported = old.manifest["validation"] is not None and new.manifest["validation"] is not None
    doc: dict[str, Any] = {
        "comparison_format": COMPARISON_FORMAT,
        "compared": "snapshots",
        "graphmill_version": __version__,
        "old": {"name": old.manifest["name"], "snapshot": str(old.root)},
        "new": {"name": new.manifest["name"], "snapshot": str(new.root)},
        "matched_by": "vertex_id",
        "vertex_types": vertex_types,
        "relations": relations,
        "label": None,
        "findings": findings_drift(old.manifest, new.manifest) if reported else None,
    }
    return judged(doc, rules, {})


def _relation(con: Any, old: SnapshotSide, new: SnapshotSide, dotted: str) -> dict[str, Any]:
    if dotted in old.manifest["relations"] and dotted in new.manifest["relations"]:
        return compare_snapshot_edges(con, old, new, dotted)
    return one_side_relation(old, new, dotted)
