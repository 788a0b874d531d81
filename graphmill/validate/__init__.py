"""Validation, the CI gate: rules over a published snapshot, and the report they make.

>>> from graphmill.validate import run_checks  # doctest: +SKIP
>>> report = run_checks(spec, Snapshot.open(path))  # doctest: +SKIP
>>> report.passed, report.counts  # doctest: +SKIP

The rules' engine-neutral cores live in :mod:`graphmill.validate.rules`.
"""

from graphmill.validate._findings import (
    Evaluation,
    Finding,
    Rule,
    resolve_severities,
    rule_catalogue,
)
from graphmill.validate._report import Report
from graphmill.validate._runner import run_checks

__all__ = [
    "Evaluation",
    "Finding",
    "Report",
    "Rule",
    "resolve_severities",
    "rule_catalogue",
    "run_checks",
]
