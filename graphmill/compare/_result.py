"""The result of a comparison: JSON (``schemas/comparison.schema.json``), JUnit XML, a
terminal summary, and the old-index -> new-index maps as Parquet files."""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any
from xml.sax.saxutils import quoteattr

import pyarrow as pa

from graphmill._atomic import atomic_directory, write_bytes_atomic
from graphmill.errors import ExitCode

COMPARISON_FORMAT = 1


@dataclass
class Comparison:
    """What changed from one bundle to the next; ``index_maps`` per kept vertex type."""

    document: dict[str, Any]
    index_maps: dict[str, pa.Table] = field(default_factory=dict)
    evaluated: list[dict[str, Any]] = field(default_factory=list)

    @property
    def passed(self) -> bool:
        """True when no drift finding has severity ``error``."""
        return bool(self.document["gate"]["passed"])

    @property
    def exit_code(self) -> ExitCode:
        return ExitCode.OK if self.passed else ExitCode.CHECKS_FAILED

    def to_dict(self) -> dict[str, Any]:
        return self.document

    def to_json(self) -> str:
        return json.dumps(self.document, sort_keys=True, indent=2, allow_nan=False) + "\n"

    def write_json(self, path: str | Path) -> Path:
        target = Path(path)
        write_bytes_atomic(target, self.to_json().encode("utf-8"))
        return target

    def write_junit(self, path: str | Path) -> Path:
        target = Path(path)
        write_bytes_atomic(target, junit_xml(self))
        return target

    def write_index_maps(self, folder: str | Path) -> list[Path]:
        """``<folder>/<vertex type>.parquet`` (old_index, new_index), written atomically."""
        from graphmill.snapshot import write_parquet

        target = Path(folder)
        with atomic_directory(target) as scratch:
            for vt, table in sorted(self.index_maps.items()):
                write_parquet(table, scratch / f"{vt}.parquet")
        return [target / f"{vt}.parquet" for vt in sorted(self.index_maps)]

    def render(self, console: Any) -> None:
        render(console, self.document)


def _subject(subject: dict[str, str]) -> str:
    return " ".join(f"{k}={v}" for k, v in subject.items()) or "bundle"


def junit_xml(comparison: Comparison) -> bytes:
    """One test case per drift rule and subject evaluated; failing exactly for errors."""
    cases = comparison.evaluated
    failures = sum(c["status"] == "fail" and c["severity"] == "error" for c in cases)
    lines = [
        '<?xml version="1.0" encoding="UTF-8"?>',
        f'<testsuite name="graphmill.compare" tests="{len(cases)}" failures="{failures}">',
    ]
    for c in cases:
        name = quoteattr(f"{c['rule']} {_subject(c['subject'])}")
        lines.append(f'  <testcase classname="drift.{c["rule"]}" name={name}>')
        text = f"{c['value']:.6g} > {c['limit']:g} ({c['severity']})"
        if c["status"] == "fail" and c["severity"] == "error":
            lines.append(f"    <failure message={quoteattr(text)}/>")
        elif c["status"] == "fail":
            lines.append(f"    <system-out>{text}</system-out>")
        lines.append("  </testcase>")
    lines.append("</testsuite>")
    return ("\n".join(lines) + "\n").encode("utf-8")


def _pct(part: float, whole: float) -> str:
    return f"{100 * part / whole:.1f}%" if whole else "-"


def render(console: Any, doc: dict[str, Any]) -> None:
    """Tables of counts and drift, then the gate's verdict, on a rich console."""
    from rich.table import Table

    where = "snapshot" if doc.get("compared") == "snapshots" else "bundle"
    console.print(
        f"[bold]{doc['old']['name']}[/bold] {doc['old'][where]} → {doc['new'][where]} "
        f"({where}s, matched by {doc['matched_by']})"
    )
    counts = Table(title="vertices and edges", title_justify="left")
    for column in ("", "old", "new", "kept", "added", "removed", "note"):
        counts.add_column(column, justify="left" if column in ("", "note") else "right")
    for kind, items in (("vertices", doc["vertex_types"]), ("edges", doc["relations"])):
        for name, e in items.items():
            note = "" if e["status"] == "both" else e["status"]
            if e.get("part_moves"):
                note = f"{e['part_moves']['changed']:,} changed part"
            counts.add_row(
                f"{kind} {name}",
                f"{e['old']:,}",
                f"{e['new']:,}",
                f"{e['kept']:,}",
                f"{e['added']:,}",
                f"{e['removed']:,} ({_pct(e['removed'], e['old'])})",
                note,
            )
    console.print(counts)
    drift = Table(title="property drift (kept types)", title_justify="left")
    for column in ("property", "changed", "PSI", "KS", "categories"):
        left = column in ("property", "categories")
        drift.add_column(column, justify="left" if left else "right")
    for vt, e in doc["vertex_types"].items():
        for prop, n in e["values_changed"].items():
            num = e["numeric_drift"].get(prop, {})
            cat = e["categorical_drift"].get(prop)
            cats = (
                f"+{cat['new_category_count']} / -{cat['vanished_category_count']}, "
                f"TVD {cat['total_variation']:.3f}"
                if cat
                else ""
            )
            drift.add_row(
                f"{vt}.{prop}",
                f"{n:,} ({_pct(n, e['kept'])})",
                _num(num.get("psi")),
                _num(num.get("ks")),
                cats,
            )
    if drift.row_count:
        console.print(drift)
    if doc["label"]:
        label = doc["label"]
        console.print(
            f"label {label['vertex_type']}.{label['property']}: TVD "
            f"{label['total_variation']:.3f}, PSI {label['psi']:.3f}"
        )
    for rel, e in doc["relations"].items():
        for side, d in e["degree"].items():
            console.print(
                f"degree {side} {rel}: KS {_num(d['ks'])}, mean {_num(d['old_mean'])} → "
                f"{_num(d['new_mean'])}, max {d['old_max']} → {d['new_max']}"
            )
    f = doc["findings"]
    if f is None:
        console.print("check findings: not compared (no check report beside both snapshots)")
    else:
        console.print(
            f"check findings: {len(f['appeared'])} appeared, {len(f['disappeared'])} "
            f"disappeared, {len(f['changed'])} changed"
        )
    gate = doc["gate"]
    for finding in gate["findings"]:
        console.print(
            f"[{'bold red' if finding['severity'] == 'error' else 'yellow'}]"
            f"{finding['severity']}[/] {finding['rule']} {_subject(finding['subject'])}: "
            f"{finding['message']}"
        )
    c = gate["counts"]
    word = "[bold green]PASSED[/]" if gate["passed"] else "[bold red]FAILED[/]"
    console.print(
        f"drift gate {word}: {c['error']} errors, {c['warning']} warnings, {c['info']} notes; "
        f"{gate['evaluated']} limits evaluated"
    )


def _num(value: Any) -> str:
    return "-" if value is None else f"{value:.4g}"
