"""Lineage: what a bundle was made from, and verifying a chain of versions end to end.

Every build records in its manifest's ``lineage`` the sha256 of the spec (its canonical JSON),
the snapshot's table hashes, and the previous version's manifest hash when it was built
against one (``drift_gate.previous`` or ``--previous``); graphmill's version and the source's
provenance sit beside it in the manifest. A chain of bundles verifies when every bundle's own
hashes verify and each names the one before it.
"""

from __future__ import annotations

import hashlib
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from graphmill.bundle import canonical_json, read_manifest, verify_files
from graphmill.errors import BundleIntegrityError, InputError


def spec_sha256(raw: dict[str, Any]) -> str:
    """sha256 of the spec document's canonical JSON (comments and key order do not count),
    leaving out where it writes (``output``), which engine computes it (``engine``: every
    engine gives the same bytes) and ``drift_gate.previous``: the same recipe written
    elsewhere or run on another engine hashes the same, and the previous version has a hash
    of its own."""
    body = {k: v for k, v in raw.items() if k not in ("output", "engine")}
    if isinstance(body.get("drift_gate"), dict):
        body["drift_gate"] = {k: v for k, v in body["drift_gate"].items() if k != "previous"}
    try:
        data = canonical_json(body)
    except (TypeError, ValueError) as exc:  # a spec built in Python with odd values
        raise InputError(f"the spec cannot be hashed for the lineage ({exc})") from None
    return hashlib.sha256(data).hexdigest()


def lineage_entry(
    raw_spec: dict[str, Any], snapshot_document: dict[str, Any], previous: str | None
) -> dict[str, Any]:
    tables = [
        {"kind": t["kind"], "name": t["name"], "rows": t["rows"], "sha256": t["sha256"]}
        for t in sorted(snapshot_document["tables"], key=lambda t: (t["kind"], t["name"]))
    ]
    return {
        "spec_sha256": spec_sha256(raw_spec),
        "snapshot_tables": tables,
        "previous_manifest_sha256": previous,
    }


def verify_lineage(bundles: Sequence[str | Path]) -> list[dict[str, Any]]:
    """Verify every bundle (manifest and files) and that each was built after the one before
    it; ``bundles`` oldest first. Returns one link per bundle; raises
    :class:`BundleIntegrityError` (exit 8) at the first break."""
    links: list[dict[str, Any]] = []
    before: dict[str, Any] | None = None
    for path in bundles:
        root = Path(path)
        manifest = read_manifest(root, verify=True)
        verify_files(root, manifest)
        lineage = manifest.get("lineage")
        if lineage is None:
            raise BundleIntegrityError(
                "the manifest records no lineage (built by an older graphmill)",
                file=str(root),
                hint="build it again to start a chain",
            )
        recorded = lineage["previous_manifest_sha256"]
        if before is not None and recorded != before["manifest_sha256"]:
            said = f"records {recorded[:12]}…" if recorded else "records no previous version"
            raise BundleIntegrityError(
                f"not built after {before['bundle']}: it {said}, that bundle's manifest is "
                f"{before['manifest_sha256'][:12]}…",
                file=str(root),
                hint="list the bundles oldest first, or rebuild with --previous",
            )
        link = {
            "bundle": str(root),
            "name": manifest["name"],
            "manifest_sha256": manifest["manifest_sha256"],
            "previous_manifest_sha256": recorded,
            "spec_sha256": lineage["spec_sha256"],
            "graphmill_version": manifest["graphmill_version"],
        }
        links.append(link)
        before = link
    return links
