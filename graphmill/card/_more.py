"""The card's later sections: comparison with the previous version, provenance and hashes,
the privacy reminder; and the page around all sections."""

from __future__ import annotations

from html import escape
from typing import Any

from graphmill.card._page import Cell, Raw, section, table
from graphmill.card._style import CSS, PRIVACY


def comparison_section(m: dict[str, Any]) -> str:
    c = m.get("comparison")
    if not c:
        return ""
    rows: list[list[Cell]] = []
    for kind, items in (("vertices", c["vertex_types"]), ("edges", c["relations"])):
        for name, e in items.items():
            key = f"comparison/{'vertex_types' if kind == 'vertices' else 'relations'}/{name}"
            rows.append(
                [
                    f"{kind} {name}",
                    e["old"],
                    e["new"],
                    (e["added"], f"{key}/added"),
                    (e["removed"], f"{key}/removed"),
                    e["kept"],
                ]
            )
    body = (
        f"<p>Compared with the previous version <code>{escape(c['old']['bundle'])}</code> "
        f"(manifest <span class='hash'>{escape(c['old']['manifest_sha256'])}</span>), "
        f"vertices matched by {escape(c['matched_by'])}.</p>"
        + table(["", "before", "now", "added", "removed", "kept"], rows)
    )
    drift: list[list[Cell]] = []
    for vt, e in c["vertex_types"].items():
        for prop, d in e["numeric_drift"].items():
            drift.append([f"{vt}.{prop}", "numeric", d["psi"], d["ks"], e["values_changed"][prop]])
        for prop, d in e["categorical_drift"].items():
            drift.append(
                [
                    f"{vt}.{prop}",
                    f"categorical: +{d['new_category_count']} / -{d['vanished_category_count']}",
                    d["psi"],
                    None,
                    e["values_changed"][prop],
                ]
            )
    if drift:
        body += table(["property", "kind", "PSI", "KS", "values changed"], drift)
    label = c.get("label")
    if label:
        shares = ", ".join(
            f"{escape(k)} {label['old'].get(k, 0):,} → {label['new'].get(k, 0):,}"
            for k in sorted(set(label["old"]) | set(label["new"]))
        )
        body += (
            f"<p>Classes of {escape(label['vertex_type'])}.{escape(label['property'])}: "
            f"{shares} (total variation {label['total_variation']:.3f}).</p>"
        )
    for vt, e in c["vertex_types"].items():
        if e.get("part_moves"):
            body += (
                f"<p>{e['part_moves']['changed']:,} of {e['kept']:,} kept {escape(vt)} vertices "
                "are in another part than before.</p>"
            )
    for rel, e in c["relations"].items():
        if e.get("part_moves"):
            body += (
                f"<p>{e['part_moves']['changed']:,} of {e['kept']:,} kept {escape(rel)} edges "
                "are in another part than before.</p>"
            )
    gate = c["gate"]
    word = "passed" if gate["passed"] else "failed"
    body += f"<p class='verdict {word}'>Drift gate {word}: {gate['evaluated']} limits evaluated"
    body += f", {len(gate['findings'])} exceeded.</p>"
    if gate["findings"]:
        body += table(
            ["severity", "rule", "subject", "value", "limit"],
            [
                [
                    f["severity"],
                    f["rule"],
                    " ".join(f"{k}={v}" for k, v in f["subject"].items()),
                    f["value"],
                    f["limit"],
                ]
                for f in gate["findings"]
            ],
        )
    return section("comparison", "Changes since the previous version", body)


def provenance_section(m: dict[str, Any]) -> str:
    src, ids = m["source"], m["ids"]
    lineage = m.get("lineage") or {}
    rows: list[list[Cell]] = [
        ["source kind", src["kind"]],
        ["source location", Raw(f"<code>{escape(src['location'])}</code>")],
        ["graphmill version", m["graphmill_version"]],
        [
            "identifiers",
            "pseudonyms (" + str(ids["scheme"]) + ")" if ids["pseudonymized"] else "original IDs",
        ],
        [
            "manifest sha256",
            _hash(m.get("manifest_sha256"))
            if m.get("manifest_sha256")
            else "in manifest.json, which hashes this card too (graphmill inspect shows it)",
        ],
        [
            "spec sha256",
            Raw(f"<span class='hash'>{escape(lineage.get('spec_sha256', '–'))}</span>"),
        ],
        [
            "previous version's manifest",
            _hash(lineage.get("previous_manifest_sha256")),
        ],
    ]
    body = (
        "<table><tbody>"
        + "".join(f"<tr><th>{escape(str(k))}</th><td>{_plain(v)}</td></tr>" for k, v in rows)
        + "</tbody></table>"
    )
    if src["queries"]:
        body += (
            "<details><summary>queries</summary>"
            + "".join(f"<pre><code>{escape(q)}</code></pre>" for q in src["queries"])
            + "</details>"
        )
    snap: list[list[Cell]] = [
        [f"{t['kind']} {t['name']}", t["rows"], Raw(f"<span class='hash'>{t['sha256']}</span>")]
        for t in lineage.get("snapshot_tables", [])
    ]
    if snap:
        body += "<h3>Snapshot tables</h3>" + table(["table", "rows", "sha256"], snap)
    files: list[list[Cell]] = [
        [
            Raw(f"<code>{escape(f['path'])}</code>"),
            f["bytes"],
            Raw(f"<span class='hash'>{f['sha256']}</span>"),
        ]
        for f in m["files"]
    ]
    body += "<h3>Bundle files</h3>" + table(["file", "bytes", "sha256"], files)
    return section("provenance", "Provenance and hashes", body)


def _hash(value: str | None) -> Raw:
    return Raw(f"<span class='hash'>{escape(value or '–')}</span>")


def _plain(value: Any) -> str:
    return value if isinstance(value, Raw) else escape(str(value))


def privacy_section() -> str:
    return (
        f'<section id="privacy" class="privacy"><h2>Personal data</h2><p>{escape(PRIVACY)}</p>'
        "</section>"
    )


def page(m: dict[str, Any], intro: str, sections: list[str]) -> str:
    titles = [
        ("counts", "Counts"),
        ("schema", "Schema"),
        ("degrees", "Degrees"),
        ("split", "Parts"),
        ("task", "Task"),
        ("features", "Features"),
        ("edge-features", "Edge features"),
        ("checks", "Checks"),
        ("leakage", "Leakage"),
        ("comparison", "Changes"),
        ("provenance", "Provenance"),
        ("privacy", "Personal data"),
    ]
    body = "".join(sections)
    nav = "".join(f'<a href="#{a}">{t}</a>' for a, t in titles if f'id="{a}"' in body)
    return (
        "<!DOCTYPE html>\n<html lang='en'><head><meta charset='utf-8'>"
        f"<title>{escape(m['name'])}: dataset card</title>"
        "<meta name='viewport' content='width=device-width, initial-scale=1'>"
        f"<style>{CSS}</style></head><body>"
        f"<header><h1>{escape(m['name'])}</h1>{intro}"
        f"<p>Built by graphmill {escape(m['graphmill_version'])} · bundle format "
        f"{m['bundle_format']}</p></header><nav>{nav}</nav><main>{body}</main></body></html>\n"
    )
