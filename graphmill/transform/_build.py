"""``build_bundle``: a published snapshot and the spec in, a bundle folder out.

Steps: index the vertices of each type, code the label and draw the parts, encode the
features (fitted on the train part of the labelled type), map and police the edges of each
relation (plus reverse relations when asked), then write everything into a scratch folder
that replaces ``spec.output.bundle`` only once complete. Any error leaves nothing behind.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pyarrow as pa
import pyarrow.parquet as pq

from graphmill._atomic import atomic_directory
from graphmill._progress import Progress, SilentProgress
from graphmill._reuse import StageMemo, snapshot_digest
from graphmill._text import plural
from graphmill._version import __version__
from graphmill.bundle import relation_key, table_path
from graphmill.connectors.base import VERTEX_ID
from graphmill.engine import Engine, open_engine
from graphmill.errors import SpecError
from graphmill.snapshot import Snapshot
from graphmill.spec import PipelineSpec, RelationKey
from graphmill.transform._edge_features import add_edge_features, edge_feature_specs
from graphmill.transform._edges import EdgeArrays
from graphmill.transform._indexing import VertexIndex, index_vertices
from graphmill.transform._inputs import check_snapshot, check_summary, check_unique, public_source
from graphmill.transform._pinned import PinnedVocabularies, read_pinned
from graphmill.transform._pseudonyms import (
    SCHEME,
    key_fingerprint,
    pseudonym_key,
    pseudonymizer,
)
from graphmill.transform._relation_edges import DeferredEdges, emit_edges
from graphmill.transform._vertices import add_vertex_type
from graphmill.transform._writer import BundleContent, write_bundle


@dataclass
class BuildInfo:
    """What a build did."""

    bundle: Path
    vertex_counts: dict[str, int] = field(default_factory=dict)
    edge_counts: dict[str, int] = field(default_factory=dict)
    duplicate_vertices: dict[str, int] = field(default_factory=dict)
    dropped_edges: dict[str, dict[str, int]] = field(default_factory=dict)
    merged_edges: dict[str, int] = field(default_factory=dict)
    added_edges: dict[str, int] = field(default_factory=dict)
    part_sizes: dict[str, int] = field(default_factory=dict)
    seconds: float = 0.0
    warnings: list[str] = field(default_factory=list)
    drift: dict[str, Any] | None = None  # the drift gate's verdict, when built after a version
    leakage: dict[str, Any] | None = None  # the leakage audit of a links task

    @property
    def leakage_passed(self) -> bool:
        return self.leakage is None or bool(self.leakage["passed"])

    def to_dict(self) -> dict[str, Any]:
        return {
            "bundle": str(self.bundle),
            "vertex_counts": self.vertex_counts,
            "edge_counts": self.edge_counts,
            "duplicate_vertices": self.duplicate_vertices,
            "dropped_edges": self.dropped_edges,
            "merged_edges": self.merged_edges,
            "added_edges": self.added_edges,
            "part_sizes": self.part_sizes,
            "seconds": round(self.seconds, 3),
            "warnings": self.warnings,
            "drift": self.drift,
            "leakage": self.leakage,
        }


def build_bundle(
    spec: PipelineSpec,
    snapshot: Snapshot,
    *,
    checks_summary: dict[str, Any] | None = None,
    progress: Progress | None = None,
    previous: Path | None = None,
    even_if_drifting: bool = False,
    even_if_leaking: bool = False,
    engine: Engine | None = None,
    memo: StageMemo | None = None,
) -> BuildInfo:
    """Build the bundle of ``spec`` from ``snapshot`` and publish it atomically.

    With ``previous`` (default: ``spec.drift_gate.previous``) the new bundle is compared with
    that bundle before publishing; the comparison and the previous manifest's hash go into the
    manifest, and a failing drift gate publishes nothing (unless ``even_if_drifting``).
    ``engine`` runs the set operations (default: the one the spec names, opened here).
    ``memo``: what the check of the same pipeline computed and the build may reuse.
    """
    from graphmill.compare._compare import open_side
    from graphmill.compare._lineage import lineage_entry

    if engine is None:
        with open_engine(spec) as opened:
            return build_bundle(
                spec,
                snapshot,
                checks_summary=checks_summary,
                progress=progress,
                previous=previous,
                even_if_drifting=even_if_drifting,
                even_if_leaking=even_if_leaking,
                engine=opened,
                memo=memo,
            )
    started = time.perf_counter()
    previous = previous or spec.drift_gate.previous
    before = open_side(previous) if previous is not None else None
    progress = progress or SilentProgress()
    key = pseudonym_key(spec.pseudonym_key_env) if spec.pseudonymize else None
    pinned = read_pinned(spec, previous)
    check_snapshot(spec, snapshot)
    check_summary(checks_summary)
    info = BuildInfo(spec.output.bundle)
    content = assemble_content(
        spec, snapshot, engine, info, key=key, pinned=pinned, progress=progress, memo=memo
    )
    _audit_leakage(content, info, spec, even_if_leaking)
    add_edge_features(content, spec)  # after the edge split: fitted on training edges
    if spec.label is not None:
        split = content.manifest["split"]
        info.part_sizes = dict(split["sizes"]) if split else {}
    content.manifest.update(
        {
            "graphmill_version": __version__,
            "name": spec.name,
            "source": public_source(snapshot.provenance),
            "ids": {
                "pseudonymized": key is not None,
                "scheme": SCHEME if key is not None else None,
                "key_env": spec.pseudonym_key_env if key is not None else None,
                "index_order": "pseudonym" if key is not None else "vertex_id",
                "key_fingerprint": key_fingerprint(key) if key is not None else None,
            },
            "counts": {
                "vertices": info.vertex_counts,
                "duplicate_vertices_dropped": info.duplicate_vertices,
                "edges": info.edge_counts,
                "edges_dropped": info.dropped_edges,
                "edges_merged": info.merged_edges,
                "edges_added": info.added_edges,
            },
            "edge_policy": {
                "duplicates": spec.edges.duplicates,
                "self_loops": spec.edges.self_loops,
                "undirected": spec.edges.undirected,
                "add_reverse": spec.edges.add_reverse,
            },
            "validation": checks_summary,
            "warnings": info.warnings,
            "lineage": lineage_entry(
                spec.raw, snapshot.document, before.manifest["manifest_sha256"] if before else None
            ),
            "comparison": None,
            "purpose": spec.raw.get("purpose"),
        }
    )
    with atomic_directory(spec.output.bundle, kind="bundle", key="output.bundle") as scratch:
        manifest = write_bundle(
            scratch, content, shard_edges=spec.output.shard_edges, progress=progress
        )
        if before is not None:
            from graphmill.compare._with_build import record_comparison

            manifest, comparison = record_comparison(
                scratch,
                manifest,
                before,
                spec.drift_gate.rules,
                bundle_name=spec.output.bundle.name,
                even_if_drifting=even_if_drifting,
            )
            info.drift = comparison.document["gate"]
            manifest = _audit_part_moves(scratch, manifest, comparison.document, info, spec)
            if not even_if_leaking:
                _refuse_leakage(info.leakage, "part-changed-since-previous")
        from graphmill.card import seal_with_card

        seal_with_card(scratch, manifest)
    info.seconds = time.perf_counter() - started
    return info


def assemble_content(
    spec: PipelineSpec,
    snapshot: Snapshot,
    engine: Engine,
    info: BuildInfo,
    *,
    key: bytes | None = None,
    pinned: PinnedVocabularies | None = None,
    audit_only: bool = False,
    progress: Progress | None = None,
    memo: StageMemo | None = None,
) -> BundleContent:
    """The bundle content up to the leakage audit: the vertex indices, labels, targets and
    parts, the features, and each relation's edges with their edge and link parts and
    negatives. The build continues from here; ``graphmill check`` stops here to run the
    leakage audit on the same parts (see :mod:`graphmill.validate._leakage_checks`), with
    ``audit_only``: only the vertex types and relations the applicable audit rules read
    (``audit_reads``), no feature encoders and no negatives. ``memo``: the audit keeps its
    vertex indices (with their keyed-hash numbers) there and the build takes them."""
    from graphmill.transform._leakage_audit import audit_reads

    progress = progress or SilentProgress()
    content = BundleContent()
    content.manifest.update(
        {"vertex_types": {}, "relations": {}, "label": None, "split": None, "task": None}
    )
    types, relations = audit_reads(spec) if audit_only else (set(spec.vertex_types), None)
    digest = snapshot_digest(snapshot) if memo is not None and key is None else None
    indices: dict[str, VertexIndex] = {}
    rows = {name: snapshot.rows("vertices", name) for name in spec.vertex_types if name in types}
    indexed = progress.task("index vertices", total=sum(rows.values()))
    encoded = progress.task("encode vertices", total=sum(rows.values()))
    for name, vt in spec.vertex_types.items():
        if name not in types:
            continue
        columns = [VERTEX_ID] + [p.name for p in vt.properties]
        reused = (digest, "vertex-index", name, tuple(columns))
        vi = memo.take(reused) if memo is not None and digest and not audit_only else None
        if vi is None:
            table = snapshot.vertices(name).select(columns)
            fn = pseudonymizer(name, key) if key is not None else None
            vi = index_vertices(name, table, pseudonymize=fn, first_rows=engine.first_rows_by_id)
        if audit_only and memo is not None and digest:
            memo.keep(reused, vi)  # the build of the same pipeline takes it
        indices[name] = vi
        indexed.advance(rows[name])
        check_unique(vi)
        info.warnings += add_vertex_type(content, spec, vi, pinned, features=not audit_only)
        info.vertex_counts[name] = vi.count
        info.duplicate_vertices[name] = vi.duplicates
        encoded.advance(rows[name])
    chosen = [r for r in spec.relations if relations is None or r.key.dotted in relations]
    edge_rows = sum(snapshot.rows("edges", rel.key.dotted) for rel in chosen)
    steps = {
        "mapped": progress.task("map edges", total=edge_rows),
        "policed": progress.task("police edges", total=edge_rows),
    }
    with engine.reporting(steps):  # the engine advances them as its queries finish
        for rel in chosen:
            _add_relation(content, info, spec, snapshot, rel, indices, engine, audit_only)
    if links_task := (spec.task.links if spec.task is not None else None):
        content.manifest["task"] = {"kind": "links", "relations": list(links_task.relations)}
    return content


def _audit_leakage(
    content: BundleContent, info: BuildInfo, spec: PipelineSpec, even_if_leaking: bool
) -> None:
    """Run the leakage audit into the manifest; refuse on an error finding unless asked."""
    from graphmill.transform._leakage_audit import audit_content

    audit = info.leakage = audit_content(content, spec)
    if audit is None:
        return
    content.manifest["leakage"] = audit
    _warn(info, audit["findings"])
    if not even_if_leaking:
        _refuse_leakage(audit, None)


def _audit_part_moves(
    scratch: Path,
    manifest: dict[str, Any],
    document: dict[str, Any],
    info: BuildInfo,
    spec: PipelineSpec,
) -> dict[str, Any]:
    """Add ``part-changed-since-previous`` (from the comparison) to the written manifest."""
    from graphmill.transform._leakage_moves import add_part_moves

    manifest, new = add_part_moves(scratch, manifest, document, spec)
    info.leakage = manifest.get("leakage")
    _warn(info, new)
    return manifest


def _warn(info: BuildInfo, findings: list[dict[str, Any]]) -> None:
    for finding in findings:
        info.warnings.append(
            f"leakage {finding['rule']} ({finding['severity']}): " + finding["message"]
        )


def _refuse_leakage(audit: dict[str, Any] | None, rule: str | None) -> None:
    """Raise :class:`LeakageError` for the audit's error findings (of ``rule`` when given)."""
    from graphmill.transform._leakage_audit import LeakageError

    errors = [
        f
        for f in (audit or {}).get("findings", [])
        if f["severity"] == "error" and rule in (None, f["rule"])
    ]
    if not errors:
        return
    first = errors[0]
    raise LeakageError(
        f"leakage audit failed with {plural(len(errors), 'error finding')}, "
        f"the first {first['rule']}: {first['message']}; no bundle built",
        hint="change the task's split or features, set checks.severity for that rule, or "
        "build with --even-if-failing",
    )


def _add_relation(
    content: BundleContent,
    info: BuildInfo,
    spec: PipelineSpec,
    snapshot: Snapshot,
    rel: Any,
    indices: dict[str, VertexIndex],
    engine: Engine,
    audit_only: bool = False,
) -> None:
    key: RelationKey = rel.key
    edges_file = snapshot.file("edges", key.dotted)  # the engine maps IDs from the file
    properties = pq.read_table(edges_file, columns=[p.name for p in rel.properties])
    src, dst = indices[key.source_type], indices[key.target_type]
    same_type = key.source_type == key.target_type
    symmetrize = rel.undirected and spec.edges.undirected == "symmetrize"
    if symmetrize and not same_type:
        info.warnings.append(
            f"{key.dotted}: an undirected relation between two vertex types cannot be "
            "symmetrized within itself; left as it is (set edges.add_reverse for a reverse)"
        )
    stream = engine.policed_edges(
        edges_file,
        src.ids,
        dst.ids,
        same_type=same_type,
        duplicates=spec.edges.duplicates,
        self_loops=spec.edges.self_loops,
        symmetrize=symmetrize and same_type,
    )
    entry = {
        "undirected": rel.undirected,
        "symmetrized": symmetrize and same_type,
        "reverse_of": None,
    }
    info.dropped_edges[key.dotted] = stream.dropped
    info.merged_edges[key.dotted] = stream.merged
    info.added_edges[key.dotted] = stream.added_reverses
    reverse = RelationKey(key.target_type, f"rev_{key.name}", key.source_type)
    add_reverse = spec.edges.add_reverse and not rel.undirected
    if add_reverse and any(r.key == reverse for r in spec.relations):
        raise SpecError(
            f"edges.add_reverse would add {reverse.dotted}, which the spec already declares",
            key_path="edges.add_reverse",
            hint="rename that relation or set add_reverse: false",
        )
    reverse_entry = {"undirected": False, "symmetrized": False, "reverse_of": key.dotted}
    if not _needed_in_memory(spec, key):  # left in the engine until the bundle is written
        _defer_relation(content, info, DeferredEdges(key, stream, False, properties), entry)
        if add_reverse:
            deferred = DeferredEdges(reverse, stream, True, properties)
            _defer_relation(content, info, deferred, reverse_entry)
        return
    outcome = stream.outcome()
    _emit_relation(content, info, key, outcome.edges, properties, entry)
    if spec.task is not None and spec.task.relation == key.dotted:
        from graphmill.transform._edge_targets import add_edge_task

        info.part_sizes = add_edge_task(content, spec, key, outcome.edges, properties, (src, dst))
    links = spec.task.links if spec.task is not None else None
    linked = links is not None and key.dotted in links.relations
    if linked:
        from graphmill.transform._link_task import add_link_split

        sizes = add_link_split(
            content,
            spec,
            key,
            outcome.edges,
            properties,
            (src, dst),
            forward=key,
            negatives=not audit_only,
        )
        for part, n in sizes.items():
            info.part_sizes[part] = info.part_sizes.get(part, 0) + n
    if add_reverse:
        reversed_edges = outcome.edges.reversed()
        _emit_relation(content, info, reverse, reversed_edges, properties, reverse_entry)
        if linked:
            add_link_split(
                content, spec, reverse, reversed_edges, properties, (dst, src), forward=key
            )
        if spec.task is not None and spec.task.relation == key.dotted:
            from graphmill.transform._edge_targets import add_edge_parts

            add_edge_parts(content, spec, reverse, reversed_edges, (dst, src), forward=key)


def _needed_in_memory(spec: PipelineSpec, key: RelationKey) -> bool:
    """Whether a relation's edges are read before the bundle is written: by an edge or links
    task (the leakage audit reads every relation's), or to fit its edge features."""
    task = spec.task
    if task is not None and (task.relation is not None or task.links is not None):
        return True
    return key.dotted in edge_feature_specs(spec)


def _relation_entry(
    key: RelationKey, count: int, merged: bool, properties: pa.Table, entry: dict[str, Any]
) -> dict[str, Any]:
    return {
        **entry,
        "source_type": key.source_type,
        "name": key.name,
        "target_type": key.target_type,
        "count": count,
        "merged": merged,
        "properties": [n for n in properties.column_names],
        "table": table_path("edges", key.dotted),
        "tensor": relation_key(key, "endpoints"),
    }


def _emit_relation(
    content: BundleContent,
    info: BuildInfo,
    key: RelationKey,
    edges: EdgeArrays,
    properties: pa.Table,
    entry: dict[str, Any],
) -> None:
    emit_edges(content, key, edges, properties)
    merged = edges.multiplicity is not None
    relations = content.manifest.setdefault("relations", {})
    relations[key.dotted] = _relation_entry(key, len(edges), merged, properties, entry)
    info.edge_counts[key.dotted] = len(edges)


def _defer_relation(
    content: BundleContent, info: BuildInfo, deferred: DeferredEdges, entry: dict[str, Any]
) -> None:
    """The manifest entry now; the edges when the bundle is written."""
    key, count = deferred.key, deferred.stream.count
    merged = deferred.stream.merged_repeats
    relations = content.manifest.setdefault("relations", {})
    relations[key.dotted] = _relation_entry(key, count, merged, deferred.properties, entry)
    content.deferred[key.dotted] = deferred
    info.edge_counts[key.dotted] = count
