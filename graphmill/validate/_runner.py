"""Which rule runs on which subjects, and :func:`run_checks`, which runs them all.

Subjects per rule:

* per relation: ``dangling-edge``, ``repeated-edge``, ``parallel-edge``;
* per relation whose source and target type are the same: ``self-loop``, ``reciprocity``,
  and ``one-way-edge`` when declared undirected (between two types an edge has no reverse
  within its own relation, and a shared id names two different vertices);
* per vertex type: ``duplicate-vertex-id``, ``isolated-vertex``, ``edgeless-vertex-type``;
* per property column: ``mixed-value-kinds`` (under a declared kind the sources leave no
  mix but integers with floats: every other value is ill-typed, see
  ``graphmill/connectors/_declared.py``); ``unexpected-value-kind`` where a ``kind`` is
  declared or ill-typed values were seen; ``absent-property`` on declared properties of
  non-empty tables; ``null-rate`` (except the label, which ``unlabeled-vertices`` covers);
  ``non-finite-number`` on float columns;
  ``value-out-of-range`` on numeric columns with a declared ``min`` or ``max``;
* the label: ``unlabeled-vertices``, ``thin-class``;
* what ``checks.expect`` names: the contract rules; the whole graph:
  ``vertex-id-in-several-types``, ``snapshot-note``;
* last, the build's leakage audit on the parts the build would draw
  (:mod:`graphmill.validate._leakage_checks`).
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from pathlib import Path

from graphmill._progress import Progress, SilentProgress
from graphmill._reuse import StageMemo
from graphmill.engine import Engine, open_engine
from graphmill.errors import InputError
from graphmill.snapshot import Snapshot
from graphmill.spec import PipelineSpec
from graphmill.validate import _contract_checks as contract
from graphmill.validate import _property_checks as props
from graphmill.validate import _structure_checks as structure
from graphmill.validate import _vertex_checks as vertex
from graphmill.validate._context import CheckContext, Outcome, subject_of
from graphmill.validate._findings import (
    SEVERITIES,
    STATUS_OF,
    Evaluation,
    Finding,
    Severity,
    resolve_severities,
)
from graphmill.validate._leakage_checks import leakage_checks, part_move_checks
from graphmill.validate._report import Report
from graphmill.validate.rules._properties import (
    ILL_TYPED,
    is_float_column,
    is_numeric_column,
)

Subject = dict[str, str]
Subjects = Callable[[CheckContext], list[Subject]]
Check = Callable[[CheckContext, Subject], Outcome | list[Outcome]]


def _relations(ctx: CheckContext) -> list[Subject]:
    return [{"relation": r.dotted} for r in ctx.relations]


def _one_type_relations(ctx: CheckContext) -> list[Subject]:
    return [{"relation": r.dotted} for r in ctx.relations if r.source_type == r.target_type]


def _undirected(ctx: CheckContext) -> list[Subject]:
    def undirected(dotted: str) -> bool:
        rel = next((r for r in ctx.relations if r.dotted == dotted), None)
        spec = ctx.relation_spec(rel) if rel else None
        return bool(spec and spec.undirected)

    return [s for s in _one_type_relations(ctx) if undirected(s["relation"])]


def _vertex_types(ctx: CheckContext) -> list[Subject]:
    return [{"vertex_type": t} for t in ctx.vertex_types]


def _graph(ctx: CheckContext) -> list[Subject]:
    return [{}]


def _columns(ctx: CheckContext) -> Iterator[tuple[str, str, str]]:
    for name in ctx.vertex_types:
        for prop in ctx.property_columns("vertices", name):
            yield "vertices", name, prop
    for rel in ctx.relations:
        for prop in ctx.property_columns("edges", rel.dotted):
            yield "edges", rel.dotted, prop


def _all_properties(ctx: CheckContext) -> list[Subject]:
    return [subject_of(*where) for where in _columns(ctx)]


def _kind_known(ctx: CheckContext) -> list[Subject]:
    def known(table: str, name: str, prop: str) -> bool:
        declared = ctx.property_spec(table, name, prop)
        ill = ctx.value_kinds(table, name).get(prop, {}).get(ILL_TYPED, 0)
        return bool((declared and declared.kind) or ill)

    return [subject_of(*w) for w in _columns(ctx) if known(*w)]


def _declared_in_rows(ctx: CheckContext) -> list[Subject]:
    return [
        subject_of(*w)
        for w in _columns(ctx)
        if ctx.property_spec(*w) is not None and ctx.table(*w[:2]).num_rows > 0
    ]


def _not_label(ctx: CheckContext) -> list[Subject]:
    label = ctx.spec.label
    skip = ("vertices", label.vertex_type, label.property) if label else None
    return [subject_of(*w) for w in _columns(ctx) if w != skip]


def _float_columns(ctx: CheckContext) -> list[Subject]:
    return [
        subject_of(*w) for w in _columns(ctx) if is_float_column(ctx.table(*w[:2]).column(w[2]))
    ]


def _bounded(ctx: CheckContext) -> list[Subject]:
    out = []
    for w in _columns(ctx):
        p = ctx.property_spec(*w)
        bounded = p is not None and (p.minimum is not None or p.maximum is not None)
        if bounded and is_numeric_column(ctx.table(*w[:2]).column(w[2])):
            out.append(subject_of(*w))
    return out


def _label(ctx: CheckContext) -> list[Subject]:
    label = ctx.spec.label
    return [{"vertex_type": label.vertex_type, "property": label.property}] if label else []


def _class_label(ctx: CheckContext) -> list[Subject]:
    """The label when its values are classes (not for a ``vertex-values`` task)."""
    task = ctx.spec.task
    return [] if task is not None and task.kind != "vertex-classes" else _label(ctx)


def _expected_types(ctx: CheckContext) -> list[Subject]:
    return [{"vertex_type": t} for t in contract.contract_vertex_types(ctx)]


def _expected_relations(ctx: CheckContext) -> list[Subject]:
    return [{"relation": r} for r in ctx.spec.checks.expect.get("relations", {})]


def _expected_properties(ctx: CheckContext) -> list[Subject]:
    named = ctx.spec.checks.expect.get("properties", {})
    return [{"vertex_type": t, "property": p} for t, ps in named.items() for p in ps]


def _ranges(ctx: CheckContext) -> list[Subject]:
    expect = ctx.spec.checks.expect
    out: list[Subject] = [
        {"vertex_type": t} for t, b in expect.get("vertex_types", {}).items() if b
    ]
    return out + [{"relation": r} for r, b in expect.get("relations", {}).items() if b]


#: (rule id, its subjects, its check), in the catalogue's order.
CHECKS: tuple[tuple[str, Subjects, Check], ...] = (
    ("dangling-edge", _relations, structure.check_dangling),
    ("duplicate-vertex-id", _vertex_types, vertex.check_duplicate_vertex_id),
    ("vertex-id-in-several-types", _graph, vertex.check_shared_ids),
    ("repeated-edge", _relations, structure.check_repeated_edge),
    ("parallel-edge", _relations, structure.check_parallel_edge),
    ("self-loop", _one_type_relations, structure.check_self_loop),
    ("reciprocity", _one_type_relations, structure.check_reciprocity),
    ("one-way-edge", _undirected, structure.check_one_way_edge),
    ("isolated-vertex", _vertex_types, vertex.check_isolated_vertex),
    ("edgeless-vertex-type", _vertex_types, vertex.check_edgeless_type),
    ("mixed-value-kinds", _all_properties, props.check_mixed_kinds),
    ("unexpected-value-kind", _kind_known, props.check_unexpected_kind),
    ("absent-property", _declared_in_rows, props.check_absent_property),
    ("null-rate", _not_label, props.check_null_rate),
    ("non-finite-number", _float_columns, props.check_non_finite),
    ("value-out-of-range", _bounded, props.check_out_of_range),
    ("unlabeled-vertices", _label, props.check_unlabeled),
    ("thin-class", _class_label, props.check_thin_class),
    ("expected-vertex-type", _expected_types, contract.check_expected_vertex_type),
    ("expected-relation", _expected_relations, contract.check_expected_relation),
    ("expected-property", _expected_properties, contract.check_expected_property),
    ("count-out-of-range", _ranges, contract.check_count_range),
    ("snapshot-note", _graph, contract.check_snapshot_notes),
)


def _status(findings: list[Finding]) -> str:
    for level in SEVERITIES:  # worst first
        if any(f.severity == level for f in findings):
            return STATUS_OF[level]
    return "pass"


def _snapshot_info(snapshot: Snapshot) -> dict[str, object]:
    doc = snapshot.document
    tables: dict[str, dict[str, int]] = {"vertices": {}, "edges": {}}
    for entry in doc["tables"]:
        tables[entry["kind"]][entry["name"]] = entry["rows"]
    source = doc.get("source", {})
    return {
        "name": doc.get("name", ""),
        "provenance": {"kind": source.get("kind", ""), "location": source.get("location", "")},
        "tables": tables,
    }


def run_checks(
    spec: PipelineSpec,
    snapshot: Snapshot,
    *,
    engine: Engine | None = None,
    previous: Path | None = None,
    part_moves: bool = True,
    progress: Progress | None = None,
    memo: StageMemo | None = None,
) -> Report:
    """Evaluate every rule that is not ``off`` on ``snapshot`` under ``spec``.

    ``engine`` runs the set operations (default: the one the spec names, opened here).
    ``previous`` (default: ``drift_gate.previous``): the earlier bundle that
    ``part-changed-since-previous`` compares with (a trial build; see ``_leakage_checks``);
    ``part_moves=False`` leaves that rule to the build that follows (``build`` and ``run``,
    whose build evaluates it on the bundle it writes and gates the same way).
    ``progress`` gets one task per rule with subjects, ``check <rule>``, advanced by the
    rows of each subject's table as the subject is checked (:func:`subject_rows`). ``memo``:
    where the leakage audit leaves its vertex indices for the build of the same pipeline.

    Raises :class:`~graphmill.errors.SpecError` for an unknown rule id in
    ``checks.severity``, :class:`~graphmill.errors.InputError` for a snapshot that lacks a
    table the spec declares. Findings and evaluations come in the catalogue's order, then in
    the snapshot's order of tables and columns.
    """
    if engine is None:
        with open_engine(spec) as opened:
            return run_checks(
                spec,
                snapshot,
                engine=opened,
                previous=previous,
                part_moves=part_moves,
                progress=progress,
                memo=memo,
            )
    severities = resolve_severities(spec)
    _require_declared_tables(spec, snapshot)
    ctx = CheckContext(spec, snapshot, engine)
    findings: list[Finding] = []
    evaluated: list[Evaluation] = []
    for rule_id, subjects, check in CHECKS:
        level = severities[rule_id]
        if level == "off":
            continue
        listed = subjects(ctx)
        if not listed:
            continue
        rows = [subject_rows(ctx, subject) for subject in listed]
        task = (progress or SilentProgress()).task(f"check {rule_id}", total=sum(rows))
        for subject, n in zip(listed, rows, strict=True):
            result = check(ctx, subject)
            outcomes = result if isinstance(result, list) else [result]
            found = [_finding(rule_id, level, subject, o) for o in outcomes if o.reported]
            findings += found
            evaluated.append(Evaluation(rule_id, subject, _status(found)))
            task.advance(n)
    leaks, audited = leakage_checks(spec, snapshot, engine, memo)  # the build's audit
    findings += leaks
    evaluated += audited
    previous = previous or spec.drift_gate.previous
    if previous is not None and part_moves:
        leaks, audited = part_move_checks(spec, snapshot, engine, previous)
        findings += leaks
        evaluated += audited
    return Report(findings=findings, evaluated=evaluated, snapshot=_snapshot_info(snapshot))


def subject_rows(ctx: CheckContext, subject: Subject) -> int:
    """The snapshot rows a check of ``subject`` goes through: its relation's edges or its
    vertex type's vertices (a property's table), every vertex for the whole graph."""
    if "relation" in subject:
        return ctx.rows("edges", subject["relation"])
    if "vertex_type" in subject:
        return ctx.rows("vertices", subject["vertex_type"])
    return sum(ctx.rows("vertices", name) for name in ctx.vertex_types)


def _require_declared_tables(spec: PipelineSpec, snapshot: Snapshot) -> None:
    """Refuse a snapshot that lacks a vertex type or relation the spec declares: it was
    pulled under another spec, and checking it would silently skip those tables."""
    present = {(t["kind"], t["name"]) for t in snapshot.document["tables"]}
    wanted = [("vertices", name) for name in spec.vertex_types]
    wanted += [("edges", rel.key.dotted) for rel in spec.relations]
    noun = {"vertices": "vertex table", "edges": "edge table"}
    missing = [f"{noun[kind]} {name}" for kind, name in wanted if (kind, name) not in present]
    if missing:
        raise InputError(
            f"the snapshot has no {missing[0]}, which the spec declares"
            + (f" ({len(missing) - 1} more missing)" if len(missing) > 1 else ""),
            file=str(snapshot.root),
            hint="it was pulled under another spec; run 'graphmill pull' again",
        )


def _finding(rule_id: str, level: Severity, subject: Subject, outcome: Outcome) -> Finding:
    return Finding(
        rule=rule_id,
        severity="info" if outcome.note else level,
        subject=dict(subject),
        count=outcome.count,
        denominator=outcome.denominator,
        sample=outcome.sample,
        message=outcome.message,
        details=outcome.details,
    )
