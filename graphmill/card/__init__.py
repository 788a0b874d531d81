"""The dataset card: one self-contained HTML page describing a bundle, for people.

Written into every bundle as ``card.html`` (hashed in the manifest like every other file) and
on demand, beside any bundle, with :func:`write_card` / ``graphmill card BUNDLE``.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from graphmill._atomic import write_bytes_atomic

CARD_FILE = "card.html"


def card_html(root: Path, manifest: dict[str, Any]) -> str:
    """The card of the bundle in ``root`` whose (verified) manifest is ``manifest``."""
    from graphmill.card import _more, _page, _tasks

    sections = [
        _page.counts_section(manifest),
        _page.schema_section(manifest),
        _page.degree_section(root, manifest),
        _page.split_section(root, manifest),
        _tasks.task_section(manifest),
        _page.features_section(root, manifest),
        _tasks.edge_features_section(manifest),
        _page.checks_section(manifest),
        _tasks.leakage_section(manifest),
        _more.comparison_section(manifest),
        _more.provenance_section(manifest),
        _more.privacy_section(),
    ]
    return _more.page(manifest, _page.purpose(manifest), sections)


def default_card_path(bundle: str | Path) -> Path:
    """Beside the bundle folder: ``<bundle>.card.html`` (the bundle itself stays untouched)."""
    root = Path(bundle)
    return root.with_name(f"{root.name}.card.html")


def write_card(bundle: str | Path, out: Path | None = None) -> Path:
    """Verify the bundle, then write its card (default :func:`default_card_path`)."""
    from graphmill.bundle import read_manifest, verify_files

    root = Path(bundle)
    manifest = read_manifest(root, verify=True)
    verify_files(root, manifest)
    target = out or default_card_path(root)
    write_bytes_atomic(target, card_html(root, manifest).encode("utf-8"))
    return target


def seal_with_card(root: Path, manifest: dict[str, Any]) -> dict[str, Any]:
    """During a build: write ``root/card.html`` from the finished manifest, list it among the
    hashed files, and re-seal the manifest. The card cannot show the hash of the manifest
    that hashes it; everything else is on it."""
    import json

    from graphmill._atomic import sha256_file
    from graphmill._schemas import validate_document
    from graphmill.bundle import MANIFEST_FILE, SELF_HASH_KEY, seal_manifest

    body = {k: v for k, v in manifest.items() if k != SELF_HASH_KEY}
    path = root / CARD_FILE
    path.write_text(card_html(root, body), encoding="utf-8")
    entry = {"path": CARD_FILE, "bytes": path.stat().st_size, "sha256": sha256_file(path)}
    files = sorted([*body["files"], entry], key=lambda f: f["path"])
    data = seal_manifest({**body, "files": files})
    sealed: dict[str, Any] = json.loads(data)
    validate_document("manifest", sealed)
    (root / MANIFEST_FILE).write_bytes(data)
    return sealed


__all__ = ["CARD_FILE", "card_html", "default_card_path", "seal_with_card", "write_card"]
