"""The leakage audit in the check report: the build's own rules on the build's own parts.

Contract: :func:`leakage_checks` computes, from the snapshot and the spec, what the build
computes before its audit (:func:`graphmill.transform._build.assemble_content` with
``audit_only``), limited to what the applicable rules read
(:func:`graphmill.transform._leakage_audit.audit_reads`): for ``feature-copies-label`` the
labelled type's index, labels or targets and keyed-hash parts, and no edges at all; for a
links task the linked relations' edges and link parts, the relations between the same two
types (for ``evaluation-pair-in-other-relation``) and their endpoint types. No feature
encoders are fitted and no negatives drawn. It then runs the build's audit
(:func:`graphmill.transform._leakage_audit.audit_content`) on it. The vertex indices it makes
(with their keyed-hash numbers) are left in the pipeline's memo (``graphmill/_reuse.py``) for
the build of the same pipeline, which takes them instead of computing them again when the
snapshot is unchanged. There is one copy of the rules; the check report's leakage findings
equal the manifest's ``leakage`` findings for the same snapshot and spec, except that
samples name original IDs where a pseudonymized bundle names pseudonyms (every check sample
names original IDs).

``part-changed-since-previous`` needs the comparison of the new version with an earlier
bundle, which compares written bundles: when a previous bundle is named (``--previous`` or
``drift_gate.previous``), :func:`part_move_checks` builds the new version into a temporary
folder beside the output bundle with the build's own :func:`build_bundle` (compared with that
bundle, never published, removed afterwards) and reports that build's findings of the rule.
That costs a whole build; it is logged, and ``off`` is the only way to skip it.

Subjects: each relation of a links task for ``evaluation-edge-in-training`` and
``evaluation-pair-in-other-relation`` (and ``training-edge-after-cut`` under ``by_time``);
each feature property of the labelled type for ``feature-copies-label``. Severities are the
spec's (``checks.severity``), ``off`` skips a rule as for every other rule. Computing the
parts costs what the build's first steps cost for the types and relations read (see
bench/bench_check_leakage.py); the time is logged at INFO (``-v``), never skipped.
"""

from __future__ import annotations

import dataclasses
import logging
import tempfile
import time
from pathlib import Path
from typing import Any

from graphmill._reuse import StageMemo
from graphmill.engine import Engine
from graphmill.snapshot import Snapshot
from graphmill.spec import PipelineSpec
from graphmill.validate._findings import STATUS_OF, Evaluation, Finding

log = logging.getLogger("graphmill.validate")

#: the JUnit suite of the leakage rules
FAMILY = "leakage"
#: rules check evaluates (``part-changed-since-previous`` only with a previous bundle)
CHECKED = (
    "evaluation-edge-in-training",
    "evaluation-pair-in-other-relation",
    "training-edge-after-cut",
    "feature-copies-label",
    "part-changed-since-previous",
)


def leakage_subjects(spec: PipelineSpec, severity: dict[str, str]) -> list[tuple[str, dict]]:
    """(rule, subject) pairs the audit evaluates for ``spec``, in the audit's order."""
    out: list[tuple[str, dict[str, str]]] = []
    links = spec.task.links if spec.task is not None else None
    if links is not None:
        for dotted in links.relations:
            rules = [*CHECKED[:2]] + (["training-edge-after-cut"] if links.by_time else [])
            out += [(rule, {"relation": dotted}) for rule in rules]
    label = spec.label
    if label is not None:
        named = [f.property for f in spec.features if f.vertex_type == label.vertex_type]
        for prop in dict.fromkeys(named):
            out.append(
                ("feature-copies-label", {"vertex_type": label.vertex_type, "property": prop})
            )
    return [(rule, subject) for rule, subject in out if severity[rule] != "off"]


def leakage_checks(
    spec: PipelineSpec, snapshot: Snapshot, engine: Engine, memo: StageMemo | None = None
) -> tuple[list[Finding], list[Evaluation]]:
    """The audit's findings and evaluations for the check report (none when no rule
    applies: no links task and no feature of a labelled type). ``memo``: where the vertex
    indices and keyed-hash numbers go for the build of the same pipeline to reuse."""
    from graphmill.transform._build import BuildInfo, assemble_content
    from graphmill.transform._leakage_audit import audit_content, severities

    subjects = leakage_subjects(spec, severities(spec))
    if not subjects:
        return [], []
    started = time.perf_counter()
    content = assemble_content(
        spec, snapshot, engine, BuildInfo(spec.output.bundle), audit_only=True, memo=memo
    )
    entry = audit_content(content, spec)
    log.info(
        "check: leakage audit: parts computed and audited in %.2f s", time.perf_counter() - started
    )
    findings = [_finding(f) for f in (entry or {}).get("findings", [])]
    return findings, _evaluations(subjects, findings)


def part_move_checks(
    spec: PipelineSpec, snapshot: Snapshot, engine: Engine, previous: Path
) -> tuple[list[Finding], list[Evaluation]]:
    """``part-changed-since-previous`` against ``previous``, from a trial build of the new
    version (see the module's contract). Subjects: the vertex types with parts and the
    relations with edge parts in both versions."""
    from graphmill.bundle import read_manifest
    from graphmill.compare._edge_moves import edge_parts_table
    from graphmill.transform._build import build_bundle
    from graphmill.transform._leakage_audit import severities
    from graphmill.transform._leakage_moves import RULE

    if severities(spec)[RULE] == "off":
        return [], []
    started = time.perf_counter()
    folder = spec.output.bundle.parent
    with tempfile.TemporaryDirectory(
        prefix=f".{spec.output.bundle.name}.check-", dir=folder if folder.is_dir() else None
    ) as scratch:
        output = dataclasses.replace(spec.output, bundle=Path(scratch) / "bundle")
        trial = dataclasses.replace(spec, output=output)
        info = build_bundle(
            trial, snapshot, previous=previous, even_if_drifting=True, even_if_leaking=True,
            engine=engine,
        )  # fmt: skip
        new = read_manifest(output.bundle, verify=False)
    old = read_manifest(previous, verify=False)
    log.info(
        "check: %s: a trial build compared with %s in %.2f s",
        RULE,
        previous,
        time.perf_counter() - started,
    )
    subjects: list[tuple[str, dict[str, str]]] = [
        (RULE, {"vertex_type": vt})
        for vt, entry in new["vertex_types"].items()
        if entry.get("parts") and (old["vertex_types"].get(vt) or {}).get("parts")
    ]
    subjects += [
        (RULE, {"relation": dotted})
        for dotted, entry in new["relations"].items()
        if edge_parts_table(entry) and edge_parts_table(old["relations"].get(dotted) or {})
    ]
    findings = [_finding(f) for f in (info.leakage or {}).get("findings", []) if f["rule"] == RULE]
    return findings, _evaluations(subjects, findings)


def _evaluations(
    subjects: list[tuple[str, dict[str, str]]], findings: list[Finding]
) -> list[Evaluation]:
    out = []
    for rule, subject in subjects:
        found = [f for f in findings if f.rule == rule and f.subject == subject]
        worst = next(
            (s for s in ("error", "warning", "info") if any(f.severity == s for f in found)), None
        )
        out.append(Evaluation(rule, subject, STATUS_OF[worst] if worst else "pass"))
    return out


def _finding(found: dict[str, Any]) -> Finding:
    extra = {k: v for k, v in found.items() if k not in _FIELDS}
    return Finding(
        rule=found["rule"],
        severity=found["severity"],
        subject=dict(found["subject"]),
        count=int(found["count"]),
        denominator=int(found["denominator"]),
        sample=list(found["sample"]),
        message=found["message"],
        details=extra,
    )


_FIELDS = ("rule", "severity", "subject", "count", "denominator", "sample", "message")
