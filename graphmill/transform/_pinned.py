"""Vocabularies pinned from an earlier bundle, so a model's input columns stay put.

Contract: the spec key ``vocabularies.pinned_from`` names an earlier bundle folder (relative
to the spec file), or the word ``previous`` for the bundle the build compares with
(``drift_gate.previous`` or ``--previous``). Its manifest is read and verified; each
categorical feature (``categories``, ``one-hot``, ``multi-hot``) whose vertex type, property
and encoding that bundle also has reuses that bundle's vocabulary exactly, in its order:
the same columns in the same places, and a category the earlier bundle did not have goes to
the unknown bucket. A categorical feature the earlier bundle lacks is fitted as usual, with
a warning. The earlier bundle is recorded by folder name and manifest hash only, so
rebuilds stay byte-identical.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from graphmill.bundle import read_manifest
from graphmill.errors import BundleIntegrityError, SpecError
from graphmill.spec import PipelineSpec

PREVIOUS = "previous"
KEY = "vocabularies.pinned_from"
CATEGORICAL = ("categories", "one-hot", "multi-hot")


@dataclass(frozen=True)
class PinnedVocabularies:
    """Vocabularies by (vertex type, property, encoding), and where they came from."""

    source: dict[str, Any]  # {"bundle": folder name, "manifest_sha256": ...}
    vocabularies: dict[tuple[str, str, str], list[str]] = field(default_factory=dict)

    def lookup(self, vertex_type: str, prop: str, encoding: str) -> list[str] | None:
        return self.vocabularies.get((vertex_type, prop, encoding))


def pinned_folder(spec: PipelineSpec, previous: Path | None) -> Path | None:
    """The folder ``vocabularies.pinned_from`` names, or None when the key is absent."""
    value = (spec.raw.get("vocabularies") or {}).get("pinned_from")
    if value is None:
        return None
    if value == PREVIOUS:
        if previous is None:
            raise SpecError(
                "vocabularies.pinned_from is 'previous' but the build has no previous bundle",
                key_path=KEY,
                hint="set drift_gate.previous, pass --previous, or name a bundle folder",
            )
        return previous
    return spec.resolve_path(str(value))


def read_pinned(spec: PipelineSpec, previous: Path | None) -> PinnedVocabularies | None:
    """Read the vocabularies of the bundle named by ``vocabularies.pinned_from``."""
    folder = pinned_folder(spec, previous)
    if folder is None:
        return None
    try:
        manifest = read_manifest(folder)
    except BundleIntegrityError as exc:
        raise SpecError(
            f"vocabularies.pinned_from: {folder.name} cannot be read ({exc.message})",
            key_path=KEY,
            hint="name the folder of an intact earlier bundle",
        ) from None
    pinned = PinnedVocabularies(
        {"bundle": folder.name, "manifest_sha256": manifest["manifest_sha256"]}
    )
    for name, entry in manifest["vertex_types"].items():
        for encoder in (entry.get("features") or {}).get("encoders", []):
            vocabulary = encoder.get("statistics", {}).get("vocabulary")
            if encoder["encoding"] in CATEGORICAL and isinstance(vocabulary, list):
                pinned.vocabularies[(name, encoder["property"], encoder["encoding"])] = [
                    str(v) for v in vocabulary
                ]
    return pinned
