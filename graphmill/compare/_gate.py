"""The drift gate: limits from the spec's ``drift_gate.rules`` applied to a comparison.

Each rule measures one number per subject (vertex type, relation, property); a value above the
rule's limit is a finding with the rule's severity. A finding of severity ``error`` fails the
gate (exit code 1, as for the checks).
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

from graphmill.spec import GateRule

SEVERITIES = ("error", "warning", "info")

RULES = {
    "vertices-removed": "share of the old vertices of a type that are gone",
    "vertices-added": "new vertices of a type, as a share of the old count",
    "edges-removed": "share of the old edges of a relation that are gone",
    "edges-added": "new edges of a relation, as a share of the old count",
    "values-changed": "share of kept vertices whose value of a property changed",
    "feature-psi": "population stability index of a numeric property",
    "feature-ks": "two-sample Kolmogorov-Smirnov statistic of a numeric property",
    "category-shift": "total variation distance of a categorical property's shares",
    "new-categories": "number of categories of a property not seen before",
    "label-shift": "total variation distance of the class shares",
    "degree-shift": "largest KS statistic of a relation's out- and in-degrees",
    "part-changed": "share of kept vertices that moved to another part",
    "edge-part-changed": "share of kept edges of a relation that moved to another part",
    "findings-appeared": "number of check findings that were not there before",
}


def _share(part: int, whole: int) -> float:
    return part / whole if whole else (1.0 if part else 0.0)


def measures(doc: dict[str, Any]) -> Iterator[tuple[str, dict[str, str], float]]:
    """(rule, subject, value) for every rule and subject the comparison can measure."""
    for vt, e in doc["vertex_types"].items():
        if e["status"] != "both":
            continue
        subject = {"vertex_type": vt}
        yield "vertices-removed", subject, _share(e["removed"], e["old"])
        yield "vertices-added", subject, _share(e["added"], e["old"])
        for prop, n in e["values_changed"].items():
            yield "values-changed", {**subject, "property": prop}, _share(n, e["kept"])
        for prop, d in e["numeric_drift"].items():
            if d["psi"] is not None:
                yield "feature-psi", {**subject, "property": prop}, d["psi"]
            if d["ks"] is not None:
                yield "feature-ks", {**subject, "property": prop}, d["ks"]
        for prop, d in e["categorical_drift"].items():
            yield "category-shift", {**subject, "property": prop}, d["total_variation"]
            yield "new-categories", {**subject, "property": prop}, d["new_category_count"]
        if e["part_moves"] is not None:
            yield "part-changed", subject, _share(e["part_moves"]["changed"], e["kept"])
    for rel, e in doc["relations"].items():
        if e["status"] != "both":
            continue
        subject = {"relation": rel}
        yield "edges-removed", subject, _share(e["removed"], e["old"])
        yield "edges-added", subject, _share(e["added"], e["old"])
        ks = [d["ks"] for d in e["degree"].values() if d["ks"] is not None]
        if ks:
            yield "degree-shift", subject, max(ks)
        if e.get("part_moves") is not None:
            yield "edge-part-changed", subject, _share(e["part_moves"]["changed"], e["kept"])
    if doc["label"] is not None:
        yield (
            "label-shift",
            {"vertex_type": doc["label"]["vertex_type"]},
            doc["label"]["total_variation"],
        )
    if doc["findings"] is not None:  # null: snapshots without check reports
        yield "findings-appeared", {}, len(doc["findings"]["appeared"])


def evaluate(
    doc: dict[str, Any], rules: dict[str, GateRule]
) -> tuple[list[dict[str, Any]], list[dict[str, Any]]]:
    """Findings (value above limit, severity not off) and every evaluated (rule, subject)."""
    findings, evaluated = [], []
    for rule, subject, value in measures(doc):
        limit = rules.get(rule)
        if limit is None or limit.severity == "off":
            continue
        over = value > limit.limit
        entry = {
            "rule": rule,
            "subject": subject,
            "value": round(float(value), 6),
            "limit": limit.limit,
            "severity": limit.severity,
        }
        evaluated.append({**entry, "status": "fail" if over else "pass"})
        if over:
            findings.append({**entry, "message": f"{RULES[rule]}: {value:.4g} > {limit.limit:g}"})
    return findings, evaluated


def gate_summary(findings: list[dict[str, Any]], evaluated: list[dict[str, Any]]) -> dict[str, Any]:
    counts = {level: sum(f["severity"] == level for f in findings) for level in SEVERITIES}
    return {
        "passed": counts["error"] == 0,
        "counts": counts,
        "evaluated": len(evaluated),
        "findings": findings,
    }
