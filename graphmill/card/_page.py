"""The dataset card's HTML: one self-contained page (inline CSS and SVG, no scripts, nothing
fetched). Numbers taken from the manifest carry ``data-manifest="key/path"`` so that tests
can check them against the manifest."""

from __future__ import annotations

from collections.abc import Sequence
from html import escape
from pathlib import Path
from typing import Any

from graphmill.card import _svg
from graphmill.card._data import class_balance, degree_points, feature_values

Cell = str | int | float | tuple[Any, str] | None


class Raw(str):
    """Already-escaped HTML."""


def _cell(value: Cell) -> str:
    if isinstance(value, tuple):
        shown, path = value
        return f'<td class="n" data-manifest="{escape(path)}">{_text(shown)}</td>'
    if isinstance(value, int | float) and not isinstance(value, bool):
        return f'<td class="n">{_text(value)}</td>'
    return f"<td>{_text(value)}</td>"


def _text(value: Any) -> str:
    if value is None:
        return "–"
    if isinstance(value, Raw):
        return value
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return f"{value:,}"
    if isinstance(value, float):
        return f"{value:,.4g}"
    return escape(str(value))


def table(headers: list[str], rows: list[list[Cell]]) -> str:
    head = "".join(f"<th>{escape(h)}</th>" for h in headers)
    body = "".join("<tr>" + "".join(_cell(c) for c in row) + "</tr>" for row in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def section(anchor: str, title: str, body: str) -> str:
    return f'<section id="{anchor}"><h2>{escape(title)}</h2>{body}</section>'


def purpose(manifest: dict[str, Any]) -> str:
    stated = manifest.get("purpose")
    label = manifest.get("label")
    auto = (
        f"Predict <b>{escape(label['property'])}</b> of <b>{escape(label['vertex_type'])}</b> "
        f"vertices ({len(label['classes'])} classes) from the graph around them."
        if label
        else "A graph without a prediction target: for embeddings or link-level tasks."
    )
    return f"<p>{escape(stated)}</p><p>{auto}</p>" if stated else f"<p>{auto}</p>"


def counts_section(m: dict[str, Any]) -> str:
    vt_rows: list[list[Cell]] = [
        [t, (e["count"], f"counts/vertices/{t}"), len(e["properties"]), e["features"]["width"]]
        for t, e in m["vertex_types"].items()
    ]
    rel_rows: list[list[Cell]] = [
        [
            r,
            (e["count"], f"counts/edges/{r}"),
            "undirected" if e["undirected"] else "directed",
            e["reverse_of"] or "",
        ]
        for r, e in m["relations"].items()
    ]
    return section(
        "counts",
        "Vertices and edges",
        table(["vertex type", "vertices", "properties", "feature columns"], vt_rows)
        + table(["relation (source.name.target)", "edges", "kind", "reverse of"], rel_rows),
    )


def schema_section(m: dict[str, Any]) -> str:
    rows: list[list[Cell]] = []
    for t, e in m["vertex_types"].items():
        encoders = {enc["property"]: enc for enc in e["features"]["encoders"]}
        for p in e["properties"]:
            enc = encoders.get(p)
            rows.append(
                [
                    t,
                    p,
                    enc["encoding"] if enc else "not a feature",
                    len(enc["columns"]) if enc else None,
                    enc["missing_values"] if enc else None,
                ]
            )
    body = table(["vertex type", "property", "encoding", "columns", "missing values"], rows)
    body += (
        "<p class='note'>Encoders are fitted on the training part of the labelled type "
        "(other types: on all their vertices); the fitted statistics are in the manifest.</p>"
    )
    return section("schema", "Schema and encodings", body)


def degree_section(root: Path, m: dict[str, Any]) -> str:
    plots = []
    for r in m["relations"]:
        points = degree_points(root, m, r)
        plots.append(
            _svg.loglog(
                {"out-degree": points["out"], "in-degree": points["in"]},
                title=f"degrees of {r}",
                x_label="degree (log)",
                y_label="vertices (log)",
                plot_id=f"degree-{r}",
            )
        )
    body = "".join(f"<figure>{p}</figure>" for p in plots) or "<p>No relations.</p>"
    return section("degrees", "Degree distributions (log–log)", f'<div class="grid">{body}</div>')


def split_section(root: Path, m: dict[str, Any]) -> str:
    split = m.get("split")
    if not split:
        return section("split", "Label and parts", "<p>No label and no split.</p>")
    rows: list[list[Cell]] = [
        [part, (split["sizes"][part], f"split/sizes/{part}"), split["fractions"][part]]
        for part in ("train", "validation", "test")
    ]
    body = (
        f"<p>{escape(split['method'])} split, seed {split['seed']}, "
        f"{escape(split['generator'])}.</p>" + table(["part", "vertices", "fraction"], rows)
    )
    from graphmill.card._tasks import shares_table

    body += shares_table(m)
    balance = class_balance(root, m)
    if balance:
        classes = sorted({c for per in balance.values() for c in per})
        order = [p for p in ("train", "validation", "test") if p in balance]
        series: dict[str, Sequence[float]] = {
            p: [balance[p].get(c, 0) for c in classes] for p in order
        }
        body += (
            "<figure>"
            + _svg.bars(
                classes,
                series,
                title="class balance per part",
                x_label=f"class of {m['label']['property']}",
                y_label="vertices",
                plot_id="class-balance",
            )
            + "</figure>"
        )
    return section("split", "Label and parts", body)


def features_section(root: Path, m: dict[str, Any]) -> str:
    plots = []
    for f in feature_values(root, m):
        name = f"{f['vertex_type']}.{f['property']}"
        if "values" in f:
            plots.append(
                _svg.histogram(
                    f["values"],
                    title=f"{name} ({f['encoding']})",
                    x_label=f"{f['property']} (raw value)",
                    plot_id=f"feature-{name}",
                )
            )
        else:
            cats = f["categories"]
            plots.append(
                _svg.bars(
                    [c for c, _ in cats],
                    {"vertices": [n for _, n in cats]},
                    title=f"{name} ({f['encoding']}), most frequent",
                    x_label=f["property"],
                    y_label="vertices",
                    plot_id=f"feature-{name}",
                )
            )
    body = "".join(f"<figure>{p}</figure>" for p in plots) or "<p>No features.</p>"
    return section("features", "Feature values", f'<div class="grid">{body}</div>')


def checks_section(m: dict[str, Any]) -> str:
    v = m.get("validation")
    if not v:
        return section("checks", "Checks", "<p>No check summary was given to the build.</p>")
    verdict = "passed" if v.get("passed") else "FAILED"
    counts = v.get("counts", {})
    body = (
        f"<p class='verdict {verdict.lower()}'>Checks {verdict}: "
        + ", ".join(
            f'<span data-manifest="validation/counts/{k}">{counts.get(k, 0)}</span> {k}'
            for k in ("error", "warning", "info")
        )
        + "</p>"
    )
    rows: list[list[Cell]] = [
        [
            f["severity"],
            f["rule"],
            " ".join(f"{k}={x}" for k, x in f["subject"].items()),
            (f["count"], f"validation/findings/{i}/count"),
        ]
        for i, f in enumerate(v.get("findings", []))
    ]
    body += table(["severity", "rule", "subject", "found"], rows) if rows else "<p>No findings.</p>"
    return section("checks", "Checks", body)
