"""The report of one check run: JSON (``schemas/report.schema.json``), JUnit XML, a terminal
summary and a compact summary for the bundle manifest.

Every output is deterministic: the same snapshot and spec give byte-identical files (sorted
keys, no timestamps, no timings).
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from graphmill._atomic import publish_file
from graphmill._text import plural
from graphmill._version import __version__
from graphmill.validate._findings import SEVERITIES, Evaluation, Finding, subject_label

REPORT_FORMAT = 1
SEVERITY_STYLE = {"error": "bold red", "warning": "yellow", "info": "cyan"}
RENDER_SAMPLES = 3  # sample records shown per finding on a terminal


@dataclass
class Report:
    """Findings of a run, every (rule, subject) evaluated, and what snapshot was checked."""

    findings: list[Finding]
    evaluated: list[Evaluation]
    snapshot: dict[str, Any] = field(default_factory=dict)

    @property
    def passed(self) -> bool:
        """True when no finding has severity ``error``."""
        return not any(f.severity == "error" for f in self.findings)

    @property
    def counts(self) -> dict[str, int]:
        """Findings per severity: ``{"error": n, "warning": n, "info": n}``."""
        return {level: sum(f.severity == level for f in self.findings) for level in SEVERITIES}

    def findings_for(self, rule: str, subject: dict[str, str]) -> list[Finding]:
        return [f for f in self.findings if f.rule == rule and f.subject == subject]

    def to_dict(self) -> dict[str, Any]:
        """The report document that ``schemas/report.schema.json`` describes."""
        return {
            "report_format": REPORT_FORMAT,
            "graphmill_version": __version__,
            "snapshot": self.snapshot,
            "passed": self.passed,
            "counts": self.counts,
            "findings": [f.to_dict() for f in self.findings],
            "evaluated": [e.to_dict() for e in self.evaluated],
        }

    def to_json(self) -> str:
        """Strict JSON (no NaN), sorted keys, two-space indent, newline at the end."""
        return json.dumps(self.to_dict(), sort_keys=True, indent=2, allow_nan=False) + "\n"

    def write_json(self, path: str | Path, *, key: str = "output.report") -> Path:
        """Write :meth:`to_json` atomically; returns the path. Replaces only an earlier
        report (``OutputPathError`` naming ``key`` otherwise)."""
        target = Path(path)
        publish_file(target, self.to_json().encode("utf-8"), kind="report", key=key)
        return target

    def write_junit(self, path: str | Path, *, key: str = "output.junit") -> Path:
        """Write JUnit XML atomically (see ``_junit.py``); returns the path. Replaces only
        earlier graphmill JUnit XML (``OutputPathError`` naming ``key`` otherwise)."""
        from graphmill.validate._junit import junit_xml

        target = Path(path)
        publish_file(target, junit_xml(self), kind="junit", key=key)
        return target

    def summary(self) -> dict[str, Any]:
        """A compact form for the bundle manifest: verdict, counts, one line per finding."""
        return {
            "passed": self.passed,
            "counts": self.counts,
            "findings": [
                {
                    "rule": f.rule,
                    "subject": dict(f.subject),
                    "severity": f.severity,
                    "count": f.count,
                }
                for f in self.findings
            ],
        }

    def verdict(self) -> str:
        """One line: passed or failed, counts per severity, checks evaluated."""
        c = self.counts
        passing = sum(e.status == "pass" for e in self.evaluated)
        word = "PASSED" if self.passed else "FAILED"
        return (
            f"{word}: {plural(c['error'], 'error')}, {plural(c['warning'], 'warning')}, "
            f"{plural(c['info'], 'note')}; {plural(len(self.evaluated), 'check')} evaluated, "
            f"{passing:,} found nothing"
        )

    def ordered_findings(self) -> list[Finding]:
        """Findings, errors first, then warnings, then notes; in report order within each."""
        rank = {level: i for i, level in enumerate(SEVERITIES)}
        ordered = sorted(enumerate(self.findings), key=lambda p: (rank[p[1].severity], p[0]))
        return [f for _, f in ordered]

    def lines(self) -> list[str]:
        """One line per finding (errors first), then the verdict: what CI logs show.

        Each line: ``severity rule subject count[/denominator]: message; e.g. sample``.
        """
        out = []
        for f in self.ordered_findings():
            found = f"{f.count}/{f.denominator}" if f.denominator else str(f.count)
            line = f"{f.severity} {f.rule} {subject_label(f.subject)} {found}: {f.message}"
            if f.sample:
                shown = "; ".join(_record_text(r) for r in f.sample[:RENDER_SAMPLES])
                more = " …" if len(f.sample) > RENDER_SAMPLES else ""
                line += f" (e.g. {shown}{more})"
            out.append(" ".join(line.split()))
        if not out:
            out.append("no findings")
        out.append(self.verdict())
        return out

    def render(self, console: Any) -> None:
        """Print the findings and the verdict: a table on a terminal, otherwise one line per
        finding (see :meth:`lines`), so that CI logs stay readable."""
        from rich.table import Table
        from rich.text import Text

        if not console.is_terminal:
            for line in self.lines():
                console.print(Text(line), soft_wrap=True)
            return
        ordered = list(enumerate(self.ordered_findings()))
        if ordered:
            table = Table(title=f"graphmill checks: {self.snapshot.get('name', '')}")
            for column in ("severity", "rule", "subject", "found", "message"):
                table.add_column(column, overflow="fold")
            for _, f in ordered:
                style = SEVERITY_STYLE[f.severity]
                found = f"{f.count}/{f.denominator}" if f.denominator else str(f.count)
                message = Text(f.message)
                if f.sample:
                    shown = "; ".join(_record_text(r) for r in f.sample[:RENDER_SAMPLES])
                    more = " …" if len(f.sample) > RENDER_SAMPLES else ""
                    message.append(f"\ne.g. {shown}{more}", style="dim")
                table.add_row(
                    Text(f.severity, style=style),
                    Text(f.rule),
                    Text(subject_label(f.subject)),
                    Text(found),
                    message,
                )
            console.print(table)
        else:
            console.print(Text("no findings"))
        console.print(Text(self.verdict(), style="bold green" if self.passed else "bold red"))


def _record_text(record: dict[str, Any]) -> str:
    from graphmill.validate._findings import json_safe

    return " ".join(
        f"{k}={json.dumps(json_safe(v), ensure_ascii=False)}" for k, v in record.items()
    )
