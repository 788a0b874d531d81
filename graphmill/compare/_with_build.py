"""A build told the previous version: compare the fresh bundle with it before publishing,
record the comparison in the manifest, and refuse to publish when the drift gate fails."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from graphmill._text import plural
from graphmill.bundle import MANIFEST_FILE, seal_manifest
from graphmill.compare._compare import compare_sides
from graphmill.compare._result import Comparison
from graphmill.compare._tables import BundleSide
from graphmill.errors import ExitCode, GraphmillError
from graphmill.spec import GateRule


class DriftGateError(GraphmillError):
    """The comparison with the previous version has error findings; nothing was published."""

    exit_code = ExitCode.CHECKS_FAILED


def record_comparison(
    scratch: Path,
    sealed: dict[str, Any],
    previous: BundleSide,
    rules: dict[str, GateRule],
    *,
    bundle_name: str,
    even_if_drifting: bool = False,
) -> tuple[dict[str, Any], Comparison]:
    """Compare the bundle written in ``scratch`` with ``previous``; rewrite its manifest with
    the comparison (folder names only, so builds stay byte-identical across machines)."""
    from graphmill._schemas import validate_document

    comparison = compare_sides(previous, BundleSide(scratch, sealed), rules=rules)
    doc = comparison.document
    doc["old"]["bundle"] = previous.root.name
    doc["new"]["bundle"] = bundle_name
    doc["new"]["manifest_sha256"] = None  # this very manifest: it cannot hold its own hash
    gate = doc["gate"]
    if not gate["passed"] and not even_if_drifting:
        first = next(f for f in gate["findings"] if f["severity"] == "error")
        where = " ".join(f"{k}={v}" for k, v in first["subject"].items())
        raise DriftGateError(
            f"drift gate failed with {plural(gate['counts']['error'], 'error finding')}, first "
            f"{first['rule']} {where}: {first['message']}; no bundle published",
            hint="run 'graphmill compare' on the two bundles to see all, widen "
            "drift_gate.rules, or build with --even-if-failing",
        )
    data = seal_manifest({**sealed, "comparison": doc})
    manifest = json.loads(data)
    validate_document("manifest", manifest)
    (scratch / MANIFEST_FILE).write_bytes(data)
    return manifest, comparison
