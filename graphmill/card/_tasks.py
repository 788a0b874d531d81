"""The card's task-side sections, each shown only when its manifest key is there: the achieved
split shares per class, the task with the edge parts per relation, the leakage audit and the
encoded edge features. Numbers carry ``data-manifest`` paths like the other sections'."""

from __future__ import annotations

from html import escape
from typing import Any

from graphmill.card._page import Cell, section, table

PARTS = ("train", "validation", "test")
SAMPLE_ROWS = 3


def shares_table(m: dict[str, Any]) -> str:
    """Per class: each part's share of its placed vertices (``split.achieved_shares``)."""
    shares = (m.get("split") or {}).get("achieved_shares")
    if not shares:
        return ""
    rows: list[list[Cell]] = [
        [name, *((per[p], f"split/achieved_shares/{name}/{p}") for p in PARTS)]
        for name, per in shares.items()
    ]
    return "<h3>Achieved shares per class</h3>" + table(["class", *PARTS], rows)


def _describe(task: dict[str, Any]) -> str:
    kind = task["kind"]
    if kind == "links":
        return "Link prediction on " + ", ".join(
            f"<code>{escape(r)}</code>" for r in task.get("relations", [])
        )
    where = task.get("vertex_type") or task.get("relation") or "?"
    what = f"<b>{escape(task.get('property', '?'))}</b> of <code>{escape(where)}</code>"
    text = f"{escape(kind)}: {what}"
    if task.get("classes"):
        text += f" ({len(task['classes'])} classes)"
    return text


def task_section(m: dict[str, Any]) -> str:
    """The task and, per relation with edge parts, the edges in each part."""
    task = m.get("task")
    rows: list[list[Cell]] = []
    for name, e in m["relations"].items():
        for key in ("link_split", "parts"):
            split = e.get(key)
            if not split:
                continue
            sizes = split["sizes"]
            extra = [p for p in sizes if p not in PARTS]
            how = "link split" if key == "link_split" else "edge parts"
            if split.get("reverse_of"):
                how += f" (those of {split['reverse_of']})"
            row: list[Cell] = [name, how]
            row += [
                (sizes[p], f"relations/{name}/{key}/sizes/{p}") if p in sizes else None
                for p in PARTS
            ]
            row.append(", ".join(f"{p} {sizes[p]:,}" for p in extra) or "")
            if key == "link_split":
                row.append(split["without_part"])
                negatives = split.get("negatives") or {}
                row.append(
                    ", ".join(f"{p} {n:,}" for p, n in negatives.get("counts", {}).items()) or "–"
                )
            else:
                row += [None, None]
            rows.append(row)
    if not task and not rows:
        return ""
    body = f"<p>{_describe(task)}</p>" if task else ""
    if rows:
        body += "<h3>Edges per part</h3>" + table(
            ["relation", "split", *PARTS, "subsets of train", "in no part", "negatives"], rows
        )
    return section("task", "Task and edge parts", body)


def _sample_text(sample: list[dict[str, Any]]) -> str:
    shown = [" ".join(f"{k}={v}" for k, v in row.items()) for row in sample[:SAMPLE_ROWS]]
    more = len(sample) - len(shown)
    return "; ".join(shown) + (f"; … {more} more" if more > 0 else "")


def leakage_section(m: dict[str, Any]) -> str:
    audit = m.get("leakage")
    if not audit:
        return ""
    verdict = "passed" if audit["passed"] else "failed"
    body = (
        f"<p class='verdict {verdict}'>Leakage audit {verdict}: "
        + ", ".join(
            f'<span data-manifest="leakage/counts/{k}">{audit["counts"].get(k, 0)}</span> {k}'
            for k in ("error", "warning", "info")
            if k in audit["counts"]
        )
        + "</p>"
    )
    rows: list[list[Cell]] = [
        [
            f["severity"],
            f["rule"],
            " ".join(f"{k}={x}" for k, x in f["subject"].items()),
            (f["count"], f"leakage/findings/{i}/count"),
            (f["denominator"], f"leakage/findings/{i}/denominator"),
            _sample_text(f["sample"]),
        ]
        for i, f in enumerate(audit["findings"])
    ]
    if rows:
        body += table(["severity", "rule", "subject", "found", "of", "sample"], rows)
    else:
        body += "<p>No findings.</p>"
    return section("leakage", "Leakage audit", body)


def edge_features_section(m: dict[str, Any]) -> str:
    """Per relation with encoded edge properties: its width and each encoder's columns."""
    body = ""
    for name, e in m["relations"].items():
        f = e.get("features")
        if not f:
            continue
        rows: list[list[Cell]] = [
            [enc["property"], enc["encoding"], ", ".join(enc["columns"]), enc["missing_values"]]
            for enc in f["encoders"]
        ]
        body += (
            f"<h3><code>{escape(name)}</code></h3><p>"
            f'<span data-manifest="relations/{escape(name)}/features/width">{f["width"]}</span> '
            f"feature columns, encoders fitted on {escape(f['fitted_on'])}.</p>"
            + table(["property", "encoding", "columns", "missing values"], rows)
        )
    return section("edge-features", "Edge features", body) if body else ""
