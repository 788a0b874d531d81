"""``graphmill inspect`` as text: :func:`graphmill.bundle.inspect_bundle`'s summary in lines
a person reads (the JSON form stays under ``--json``)."""

from __future__ import annotations

from typing import Any

from graphmill._text import plural


def summary_lines(summary: dict[str, Any]) -> list[str]:
    """:func:`inspect_bundle`'s summary as readable lines (what ``graphmill inspect`` prints):
    verdict, counts per vertex type and relation, features, parts, checks, provenance."""
    lines: list[str] = []
    stale = summary.get("stale")
    if stale:
        lines.append(f"STALE: moved aside by a run that did not finish ({stale.get('reason')})")
    files = summary["files"]
    bad = [f["path"] for f in files if not f["verified"]]
    verdict = "verified" if summary["verified"] else "DAMAGED"
    lines.append(
        f"bundle {summary['name']!r} (format {summary['bundle_format']}, written by graphmill "
        f"{summary['graphmill_version']}): {verdict}"
    )
    ok_files = len(files) - len(bad)
    manifest = "manifest self-hash ok" if summary["manifest_verified"] else "MANIFEST ALTERED"
    lines.append(f"  files: {ok_files} of {plural(len(files), 'file')} verified; {manifest}")
    lines += [f"  altered or missing: {path}" for path in bad]
    lines.append("vertices")
    width = max([len(t) for t in summary["vertices"]] + [len(r) for r in summary["relations"]])
    for name, n in summary["vertices"].items():
        feats = summary["features"].get(name, {}).get("width", 0)
        lines.append(f"  {name:<{width}}  {n:>12,}  {plural(feats, 'feature column')}")
    lines.append("relations")
    for name, n in summary["relations"].items():
        lines.append(f"  {name:<{width}}  {n:>12,}")
    if summary.get("classes"):
        lines.append(f"classes: {', '.join(map(str, summary['classes']))}")
    if summary.get("parts"):
        parts = ", ".join(f"{k} {n:,}" for k, n in summary["parts"].items())
        lines.append(f"parts: {parts}")
    if summary.get("task"):
        lines.append(_task_line(summary["task"]))
    if summary.get("leakage") is not None:
        lines.append(_leakage_line(summary["leakage"]))
    lines.append(_checks_line(summary.get("validation")))
    lines.append(f"ids: {'pseudonymized' if summary['ids'].get('pseudonymized') else 'original'}")
    lines.append(f"source: {_provenance_line(summary.get('source') or {})}")
    lines += [f"note: {w}" for w in summary.get("warnings", [])]
    return lines


def _checks_line(validation: dict[str, Any] | None) -> str:
    if not validation:
        return "checks: none recorded"
    counts = validation.get("counts") or {}
    parts = [
        plural(int(counts.get(k, 0)), w) for k, w in (("error", "error"), ("warning", "warning"))
    ]
    if validation.get("passed"):
        return f"checks: passed ({', '.join(parts)})"
    return f"checks: FAILED ({', '.join(parts)}); built anyway with --even-if-failing"


def _provenance_line(source: dict[str, Any]) -> str:
    kind = source.get("kind", "?")
    where = source.get("location") or source.get("url") or source.get("paths") or ""
    if isinstance(where, list):
        where = ", ".join(map(str, where[:3])) + (" …" if len(where) > 3 else "")
    queries = len(source.get("queries") or [])
    asked = f" ({plural(queries, 'query')})" if queries else ""
    return f"{kind} {where}{asked}".strip()


def _task_line(task: dict[str, Any]) -> str:
    """``task: links on a.r.b`` / ``task: vertex-values (person.score)``."""
    if task.get("relations"):
        return f"task: {task['kind']} on {', '.join(task['relations'])}"
    owner = task.get("vertex_type") or task.get("relation")
    return f"task: {task['kind']} ({owner}.{task.get('property')})"


def _leakage_line(leakage: dict[str, Any]) -> str:
    counts = leakage.get("counts") or {}
    found = ", ".join(plural(int(counts.get(k, 0)), k) for k in ("error", "warning"))
    verdict = "passed" if leakage.get("passed") else "FAILED; built anyway with --even-if-failing"
    return f"leakage audit: {verdict} ({found})"
