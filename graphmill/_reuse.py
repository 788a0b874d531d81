"""What the check stage's leakage audit computed that the build of the same pipeline reuses.

Contract: :class:`StageMemo` holds, per vertex type, the :class:`VertexIndex` (original-ID
order) and the keyed-hash numbers of its parts (:func:`stable_unit_interval`) that the audit
computed, under a key of the snapshot's content (its ``snapshot.json`` document, which names
every file's sha256), the vertex type, its columns and the split seed. The build of the same
:class:`~graphmill.pipeline.Pipeline` takes each entry once (:meth:`take`, which drops it), so
nothing is held past the build and nothing is computed twice when the snapshot and the spec
are unchanged; any other key misses, and the value is computed as before. Only vertex arrays
are held across stages, never a relation's edges (those stay in the engine, which is opened
per stage). A pseudonymized build orders vertices by pseudonym and so never hits an entry the
audit made (in original-ID order).
"""

from __future__ import annotations

import hashlib
import json
from typing import Any

from graphmill.snapshot import Snapshot


def snapshot_digest(snapshot: Snapshot) -> str:
    """The sha256 of the snapshot's document (its files' sha256s, counts and kinds)."""
    text = json.dumps(snapshot.document, sort_keys=True, separators=(",", ":"), default=str)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


class StageMemo:
    """Values keyed by ``(snapshot digest, what, ...)``; each is taken at most once."""

    def __init__(self) -> None:
        self._values: dict[tuple[Any, ...], Any] = {}

    def __len__(self) -> int:
        return len(self._values)

    def keep(self, key: tuple[Any, ...], value: Any) -> None:
        self._values[key] = value

    def take(self, key: tuple[Any, ...]) -> Any | None:
        """The value kept under ``key`` (dropped from the memo), or None."""
        return self._values.pop(key, None)

    def clear(self) -> None:
        self._values.clear()
