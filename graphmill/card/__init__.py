"""The dataset card: one self-contained HTML page describing a bundle, for people.

Written into every bundle as ``card.html`` (a view of the bundle, not listed among its hashed
files) and on demand with :func:`write_card` / ``graphmill card BUNDLE``.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from graphmill._atomic import write_bytes_atomic

CARD_FILE = "card.html"


def card_html(root: Path, manifest: dict[str, Any]) -> str:
    """The card of the bundle in ``root`` whose (verified) manifest is ``manifest``."""
    from graphmill.card import _more, _page

    sections = [
        _page.counts_section(manifest),
        _page.schema_section(manifest),
        _page.degree_section(root, manifest),
        _page.split_section(root, manifest),
        _page.features_section(root, manifest),
        _page.checks_section(manifest),
        _more.comparison_section(manifest),
        _more.provenance_section(manifest),
        _more.privacy_section(),
    ]
    return _more.page(manifest, _page.purpose(manifest), sections)


def write_card(bundle: str | Path, out: Path | None = None) -> Path:
    """Verify the bundle, then write its card (default ``<bundle>/card.html``); return the path."""
    from graphmill.bundle import read_manifest, verify_files

    root = Path(bundle)
    manifest = read_manifest(root, verify=True)
    verify_files(root, manifest)
    target = out or root / CARD_FILE
    write_bytes_atomic(target, card_html(root, manifest).encode("utf-8"))
    return target


__all__ = ["CARD_FILE", "card_html", "write_card"]
