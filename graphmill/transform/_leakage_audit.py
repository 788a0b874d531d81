"""The edge-leakage audit of a links task, run by the build after the split.

Contract: :func:`audit_content` evaluates the rules of
:data:`~graphmill.transform._leakage.LEAKAGE_RULES` that need no earlier bundle on the
gathered bundle content (the edge rules for every relation of a links task, and
``feature-copies-label``; severities from ``checks.severity``; ``off`` skips a rule) and
returns the manifest's ``leakage`` entry: ``passed`` (no error finding), counts by severity,
and the findings, each with a sorted sample of offenders by original ID (pseudonym when
pseudonymized). ``part-changed-since-previous`` is added after the comparison with the
previous bundle (:mod:`graphmill.transform._leakage_moves`).
:class:`LeakageError` is what the build raises on an error finding, unless asked to build
anyway (``--even-if-failing``).
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Any

import numpy as np

from graphmill.bundle import relation_key, table_path
from graphmill.errors import ExitCode, GraphmillError
from graphmill.spec import PipelineSpec, RelationKey
from graphmill.transform._leakage import (
    LEAKAGE_RULES,
    after_cut,
    parallel_in_other,
    seen_in_training,
)
from graphmill.transform._negatives import pair_codes
from graphmill.transform._timestamps import EPOCH, time_numbers
from graphmill.transform._writer import BundleContent


class LeakageError(GraphmillError):
    """The leakage audit has error findings; nothing was published."""

    exit_code = ExitCode.CHECKS_FAILED


def severities(spec: PipelineSpec) -> dict[str, str]:
    """Each leakage rule's severity: its default, then ``checks.severity``."""
    return {r: spec.checks.severity.get(r, d) for r, (d, _) in LEAKAGE_RULES.items()}


def leakage_entry(severity: dict[str, str], findings: list[dict[str, Any]]) -> dict[str, Any]:
    """The manifest's ``leakage`` entry: verdict, counts by severity, rules, findings."""
    counts = {s: sum(f["severity"] == s for f in findings) for s in ("error", "warning", "info")}
    return {
        "passed": counts["error"] == 0,
        "counts": counts,
        "rules": severity,
        "findings": findings,
    }


def audit_content(content: BundleContent, spec: PipelineSpec) -> dict[str, Any] | None:
    """The ``leakage`` entry for the rules that apply before publishing (a links task's edge
    rules, ``feature-copies-label`` for a label with features); None when none applies."""
    from graphmill.transform._leakage_labels import audit_label_copies

    links = spec.task is not None and spec.task.links is not None
    labelled = spec.label is not None and any(
        f.vertex_type == spec.label.vertex_type for f in spec.features
    )
    if not (links or labelled):
        return None
    severity = severities(spec)
    findings = audit_links(content, spec, severity) if links else []
    findings += audit_label_copies(content, spec, severity["feature-copies-label"])
    return leakage_entry(severity, findings)


def audit_reads(spec: PipelineSpec) -> tuple[set[str], set[str]]:
    """The vertex types and relations (dotted) whose content :func:`audit_content` reads
    under ``spec``'s severities: for ``feature-copies-label``, the labelled type only (its
    table, labels or targets and parts; no edges); for a links task, each linked relation
    (with its added reverse), the relations between the same two types (either way round)
    when ``evaluation-pair-in-other-relation`` is on, and their endpoint types. What the
    check stage computes for its audit, and nothing more (``assemble_content``)."""
    severity = severities(spec)
    links = spec.task.links if spec.task is not None else None
    types: set[str] = set()
    relations: set[str] = set()
    if links is not None:
        linked = [RelationKey.parse(d) for d in links.relations]
        ends = {(k.source_type, k.target_type) for k in linked}
        ends |= {(t, s) for s, t in ends}
        others = severity["evaluation-pair-in-other-relation"] != "off"
        for rel in spec.relations:
            key = rel.key
            if key.dotted in links.relations or (
                others and (key.source_type, key.target_type) in ends
            ):
                relations.add(key.dotted)
                types |= {key.source_type, key.target_type}
    label = spec.label
    copies = severity["feature-copies-label"] != "off"
    if (
        label is not None
        and copies
        and any(f.vertex_type == label.vertex_type for f in spec.features)
    ):
        types.add(label.vertex_type)
    return types, relations


def audit_links(
    content: BundleContent, spec: PipelineSpec, severity: dict[str, str]
) -> list[dict[str, Any]]:
    """The findings of the edge rules on ``spec``'s links task."""
    assert spec.task is not None and spec.task.links is not None
    relations = content.manifest["relations"]
    findings: list[dict[str, Any]] = []

    def report(rule: str, dotted: str, found: np.ndarray, of: int, ends: np.ndarray) -> None:
        if severity[rule] == "off" or len(found) == 0:
            return
        key = RelationKey.parse(dotted)
        src, dst = _ids(content, key.source_type), _ids(content, key.target_type)
        pairs = sorted({(src[s], dst[t]) for s, t in ends[:, found].T.tolist()})
        sample = [{"source": a, "target": b} for a, b in pairs[: spec.checks.sample_size]]
        findings.append(
            {
                "rule": rule,
                "severity": severity[rule],
                "subject": {"relation": dotted},
                "count": len(found),
                "denominator": of,
                "sample": sample,
                "message": f"{dotted}: {len(found)} of {of}: {LEAKAGE_RULES[rule][1]}",
            }
        )

    for dotted in spec.task.links.relations:
        key = RelationKey.parse(dotted)
        ends = content.tensors[relation_key(key, "endpoints")]
        split = relations[dotted]["link_split"]
        evaluation = np.concatenate([_positions(content, key, p) for p in ("validation", "test")])
        training = _training(content, key, split)
        width = relations_count(content, key.target_type)
        reverse = next((n for n, e in relations.items() if e["reverse_of"] == dotted), None)
        extra = None
        if reverse is not None:
            rkey = RelationKey.parse(reverse)
            rends = content.tensors[relation_key(rkey, "endpoints")]
            rtrain = _training(content, rkey, relations[reverse]["link_split"])
            extra = pair_codes(rends[1, rtrain], rends[0, rtrain], width)
        same = key.source_type == key.target_type
        found = seen_in_training(
            ends, evaluation, training, width=width, same_type=same, extra=extra
        )
        report("evaluation-edge-in-training", dotted, found, len(evaluation), ends)
        other = _other_pairs(content, key, {dotted, reverse}, width)
        found = parallel_in_other(ends, evaluation, other, width=width)
        report("evaluation-pair-in-other-relation", dotted, found, len(evaluation), ends)
        cut = spec.task.links.by_time
        if cut is not None and "by_time" in split:
            first = _cut_number(split["by_time"]["validation_from"])
            both = spec.relation(key).undirected and cut.of != "edge" and same
            times = _times(content, key, "both" if both else cut.of, cut.property, ends)
            found = after_cut(times, training, first)
            report("training-edge-after-cut", dotted, found, len(training), ends)
    return findings


def relations_count(content: BundleContent, vertex_type: str) -> int:
    return int(content.manifest["vertex_types"][vertex_type]["count"])


def _positions(content: BundleContent, key: RelationKey, part: str) -> np.ndarray:
    return content.tensors[relation_key(key, f"part.{part}.positions")]


def _training(content: BundleContent, key: RelationKey, split: dict[str, Any]) -> np.ndarray:
    """The training message-passing edges: ``message`` when asked for, else ``train``."""
    return _positions(content, key, "message" if "message" in split["sizes"] else "train")


def _other_pairs(
    content: BundleContent, key: RelationKey, skip: set[str | None], width: int
) -> np.ndarray:
    """Pair codes, oriented like ``key``, of other relations' message-passing edges."""
    pools = [np.zeros(0, dtype=np.int64)]
    for dotted, entry in content.manifest["relations"].items():
        if dotted in skip:
            continue
        other = RelationKey.parse(dotted)
        ends = content.tensors[relation_key(other, "endpoints")]
        kept = _training(content, other, entry["link_split"]) if "link_split" in entry else None
        s, t = (ends[0], ends[1]) if kept is None else (ends[0, kept], ends[1, kept])
        if (other.source_type, other.target_type) == (key.source_type, key.target_type):
            pools.append(pair_codes(s, t, width))
        if (other.source_type, other.target_type) == (key.target_type, key.source_type):
            pools.append(pair_codes(t, s, width))
    return np.concatenate(pools)


def _times(
    content: BundleContent, key: RelationKey, of: str, prop: str, ends: np.ndarray
) -> np.ndarray:
    """Each edge's own timestamp (a later copy of a pair keeps its later time). For vertex
    times on an undirected relation (``both``) the earlier endpoint's, as in the split, since
    the two directions are one edge."""
    if of == "edge":
        column = content.tables[table_path("edges", key.dotted)].column(prop)
        return time_numbers(column, where="task.by_time.property")
    if of == "both":
        return np.fmin(
            _times(content, key, "source", prop, ends), _times(content, key, "target", prop, ends)
        )
    vertex_type, at = (key.source_type, ends[0]) if of == "source" else (key.target_type, ends[1])
    column = content.tables[table_path("vertices", vertex_type)].column(prop).take(at)
    return time_numbers(column, where="task.by_time.property")


def _cut_number(value: float | str) -> float:
    if isinstance(value, str):
        if value == "none":
            return float("inf")
        moment = datetime.fromisoformat(value)
        moment = moment if moment.tzinfo else moment.replace(tzinfo=UTC)
        return (moment - EPOCH).total_seconds() * 1e6
    return float(value)


def _ids(content: BundleContent, vertex_type: str) -> list[Any]:
    table = content.tables[table_path("vertices", vertex_type)]
    return table.column(content.manifest["vertex_types"][vertex_type]["id_column"]).to_pylist()
