"""Fingerprints of what a work unit reads, so that a resumed pull can tell stale staged data.

A fingerprint is a small JSON-able dict. For files (:class:`FileFingerprints`): per file the
path as the spec wrote it, its size, its modification time in nanoseconds and the sha256 of
its content, streamed (about 320 MiB/s, measured on the project's 2-core machine). For
servers: what a cheap query can tell (the Gremlin and SPARQL sources count the unit's
items and digest its first and last keys).

:func:`changes` compares two fingerprints and says what differs, in words; a file whose
modification time changed but whose size and content did not is *not* a change (a copy or
a ``touch``). :func:`publishable` drops the modification times, so that a snapshot's
provenance depends only on the content it was pulled from.
"""

from __future__ import annotations

import hashlib
import json
import os
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from graphmill._atomic import sha256_file

Fingerprint = dict[str, Any]


class FileFingerprints:
    """Fingerprints of files, each file hashed at most once per instance (one pull)."""

    def __init__(self) -> None:
        self._seen: dict[tuple[str, int, int], str] = {}

    def of_file(self, path: Path, shown: str) -> dict[str, Any]:
        """``{path, size, mtime_ns, sha256}`` of one file; unreadable files are left to the
        source's own reading, which names them (here: size -1, no hash)."""
        try:
            stat = os.stat(path)
        except OSError:
            return {"path": shown, "size": -1, "mtime_ns": 0, "sha256": ""}
        key = (str(path), stat.st_size, stat.st_mtime_ns)
        if key not in self._seen:
            try:
                self._seen[key] = sha256_file(path)
            except OSError:
                self._seen[key] = ""
        return {
            "path": shown,
            "size": stat.st_size,
            "mtime_ns": stat.st_mtime_ns,
            "sha256": self._seen[key],
        }

    def remember(self, path: Path, size: int, mtime_ns: int, sha256: str) -> None:
        """Take the sha256 of ``path`` as it was at ``size`` and ``mtime_ns`` from a reader
        that hashed it while reading it (so it is not read again)."""
        self._seen[(str(path), size, mtime_ns)] = sha256

    def of_files(self, files: Iterable[tuple[Path, str]]) -> Fingerprint:
        """The fingerprint of a unit that reads ``files`` (``(path, shown)`` pairs)."""
        unique = dict.fromkeys((Path(p), s) for p, s in files)
        return {"files": [self.of_file(p, s) for p, s in unique]}


def key_digest(*keys: Any) -> str:
    """A short sha256 of keys (element ids, IRIs): tells a change, reveals no key."""
    text = json.dumps([None if k is None else str(k) for k in keys], ensure_ascii=False)
    return hashlib.sha256(text.encode()).hexdigest()[:32]


def _file_changes(old: list[dict[str, Any]], new: list[dict[str, Any]]) -> list[str]:
    before = {f["path"]: f for f in old}
    after = {f["path"]: f for f in new}
    out: list[str] = []
    for path in sorted(set(before) | set(after)):
        a, b = before.get(path), after.get(path)
        if a is None or b is None:
            out.append(f"file {path} {'added' if a is None else 'no longer read'}")
        elif a["size"] != b["size"]:
            out.append(f"file {path} changed (size {a['size']} -> {b['size']} bytes)")
        elif a["sha256"] != b["sha256"]:
            out.append(f"file {path} changed (same size, different sha256)")
    return out


def changes(old: Fingerprint | None, new: Fingerprint | None) -> list[str]:
    """What differs between the fingerprint a unit was staged under and today's, in words.

    An empty list means "same input" (or unknown: a source that offers no fingerprint).

    >>> changes({"count": 3, "first": "a"}, {"count": 4, "first": "a"})
    ['count 3 -> 4']
    """
    if old is None or new is None or old == new:
        return []
    if "files" in old or "files" in new:
        return _file_changes(old.get("files", []), new.get("files", []))
    out = []
    for key in sorted(set(old) | set(new)):
        a, b = old.get(key), new.get(key)
        if a != b:
            short = "digest" in key or key in ("first", "last")
            out.append(f"{key} changed" if short else f"{key} {a} -> {b}")
    return out


def publishable(fingerprint: Fingerprint | None) -> Fingerprint | None:
    """The fingerprint without modification times (see the module doc)."""
    if fingerprint is None or "files" not in fingerprint:
        return fingerprint
    files = [{k: v for k, v in f.items() if k != "mtime_ns"} for f in fingerprint["files"]]
    return {**fingerprint, "files": files}
