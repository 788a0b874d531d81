"""The rule catalogue, findings, and how spec severity overrides apply.

Every rule has a fixed id (see docs/decisions/0001-architecture.md), a family (the JUnit
suite it reports under) and a default severity. ``checks.severity`` in the spec replaces
the default of a rule's *violations*; ``off`` skips the rule. Notes that a rule reports
below its limit (an unlabeled share under ``max_unlabeled_rate``, an integer+float mix)
stay ``info`` whatever the override.
"""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass, field
from typing import Any, Literal

from graphmill.errors import SpecError
from graphmill.spec import PipelineSpec

Severity = Literal["error", "warning", "info"]
SEVERITIES: tuple[Severity, ...] = ("error", "warning", "info")
STATUS_OF: dict[str, str] = {"error": "fail", "warning": "warn", "info": "info"}


@dataclass(frozen=True)
class Rule:
    """One rule of the catalogue."""

    id: str
    family: str
    default: Severity
    summary: str


def _rules(*rows: tuple[str, str, Severity, str]) -> dict[str, Rule]:
    return {row[0]: Rule(*row) for row in rows}


#: Every rule, in the order the runner evaluates and reports them.
RULES: dict[str, Rule] = _rules(
    (
        "dangling-edge",
        "structure",
        "error",
        "edge endpoints that are not vertices of the declared type",
    ),
    ("duplicate-vertex-id", "structure", "error", "a vertex id listed more than once in one type"),
    (
        "vertex-id-in-several-types",
        "structure",
        "warning",
        "one id used by vertices of several types",
    ),
    ("repeated-edge", "structure", "warning", "exact copies of an edge (every column equal)"),
    ("parallel-edge", "structure", "info", "edges between the same pair that differ in properties"),
    ("self-loop", "structure", "warning", "edges from a vertex to itself"),
    ("reciprocity", "structure", "info", "share of edges whose reverse is in the same relation"),
    (
        "one-way-edge",
        "structure",
        "warning",
        "edges of an undirected relation without their reverse",
    ),
    ("isolated-vertex", "structure", "warning", "vertices without any edge"),
    (
        "edgeless-vertex-type",
        "structure",
        "warning",
        "a vertex type that no non-empty relation touches",
    ),
    (
        "mixed-value-kinds",
        "properties",
        "error",
        "a property without a declared kind holding values of several kinds",
    ),
    (
        "unexpected-value-kind",
        "properties",
        "error",
        "ill-typed values, or values of another kind than declared",
    ),
    (
        "absent-property",
        "properties",
        "error",
        "a declared property without a value on any vertex or edge of its table",
    ),
    ("null-rate", "properties", "warning", "a property missing on more than max_null_rate"),
    ("non-finite-number", "properties", "error", "NaN or infinite floating-point values"),
    ("value-out-of-range", "properties", "error", "numbers outside the declared min/max"),
    ("unlabeled-vertices", "target", "warning", "label-type vertices without a label"),
    ("thin-class", "target", "warning", "label classes with fewer than min_class_size members"),
    (
        "expected-vertex-type",
        "contract",
        "error",
        "a vertex type the contract names is absent or empty",
    ),
    ("expected-relation", "contract", "error", "a relation the contract names is absent or empty"),
    ("expected-property", "contract", "error", "a property the contract names is absent or empty"),
    ("count-out-of-range", "contract", "error", "a table's row count outside the contract's range"),
    ("snapshot-note", "snapshot", "info", "a warning recorded when the snapshot was pulled"),
)


def rule_catalogue() -> dict[str, Rule]:
    """Every rule by id, in evaluation order (a copy of :data:`RULES`)."""
    return dict(RULES)


def subject_label(subject: dict[str, str]) -> str:
    """A short text for a subject: ``person``, ``person.age``, ``a.knows.a``,
    ``a.knows.a/since`` or ``graph``.

    >>> subject_label({"relation": "a.knows.a", "property": "since"})
    'a.knows.a/since'
    """
    if "relation" in subject:
        prop = subject.get("property")
        return f"{subject['relation']}/{prop}" if prop else subject["relation"]
    if "vertex_type" in subject:
        prop = subject.get("property")
        return f"{subject['vertex_type']}.{prop}" if prop else subject["vertex_type"]
    return "graph"


@dataclass(frozen=True)
class Finding:
    """What one rule found about one subject.

    ``rate`` is ``count / denominator`` (0 when the denominator is 0); ``sample`` holds at
    most ``checks.sample_size`` offender records with original IDs, sorted.
    """

    rule: str
    severity: Severity
    subject: dict[str, str]
    count: int
    denominator: int
    sample: list[dict[str, Any]]
    message: str
    details: dict[str, Any] = field(default_factory=dict)

    @property
    def rate(self) -> float:
        return self.count / self.denominator if self.denominator else 0.0

    def to_dict(self) -> dict[str, Any]:
        return {
            "rule": self.rule,
            "severity": self.severity,
            "subject": dict(self.subject),
            "count": self.count,
            "denominator": self.denominator,
            "rate": self.rate,
            "sample": [json_safe(r) for r in self.sample],
            "message": self.message,
            "details": json_safe(self.details),
        }


@dataclass(frozen=True)
class Evaluation:
    """One evaluated (rule, subject) and its outcome: pass, fail, warn or info."""

    rule: str
    subject: dict[str, str]
    status: str

    def to_dict(self) -> dict[str, Any]:
        return {"rule": self.rule, "subject": dict(self.subject), "status": self.status}


def json_safe(value: Any) -> Any:
    """``value`` with non-finite floats as strings (``NaN``, ``Infinity``, ``-Infinity``),
    dates and times in ISO 8601, bytes in hex, so that strict JSON can hold it."""
    if isinstance(value, float) and not math.isfinite(value):
        return "NaN" if math.isnan(value) else ("Infinity" if value > 0 else "-Infinity")
    if isinstance(value, dict):
        return {str(k): json_safe(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [json_safe(v) for v in value]
    if isinstance(value, bytes):
        return value.hex()
    if hasattr(value, "isoformat"):
        return value.isoformat()
    return value


def resolve_severities(spec: PipelineSpec) -> dict[str, Severity | Literal["off"]]:
    """The severity of each rule for ``spec``: defaults, then ``checks.severity``.

    ``one-way-edge`` defaults to ``warning`` when ``edges.undirected`` is ``symmetrize``
    (the build adds the missing reverses) and to ``error`` when it is ``as-is``. Raises
    :class:`SpecError` naming ``checks.severity.<id>`` for an unknown rule id.
    """
    out: dict[str, Severity | Literal["off"]] = {rid: r.default for rid, r in RULES.items()}
    out["one-way-edge"] = "warning" if spec.edges.undirected == "symmetrize" else "error"
    from graphmill.transform._leakage import LEAKAGE_RULES

    for rule_id, level in spec.checks.severity.items():
        if rule_id in LEAKAGE_RULES:
            continue  # evaluated by the build's leakage audit, not by check
        if rule_id not in RULES:
            close = difflib.get_close_matches(rule_id, list(RULES), n=1)
            guess = f"; did you mean {close[0]!r}?" if close else ""
            raise SpecError(
                f"unknown rule id {rule_id!r}{guess}",
                file=str(spec.spec_file) if spec.spec_file else None,
                key_path=f"checks.severity.{rule_id}",
                hint=f"rule ids are: {', '.join(RULES)}",
            )
        out[rule_id] = level  # type: ignore[assignment]  # the schema allows only the four
    return out
