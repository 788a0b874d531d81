"""Atomic publication of outputs: written aside, then renamed into place.

An existing output is replaced only when :mod:`graphmill._output_kinds` recognises it as an
earlier graphmill output of the same kind. No ``.writing-*`` or ``.retired-*`` sibling
outlives the call, and a failed write leaves the old output (and no new folders) behind.
"""

from __future__ import annotations

import contextlib
import hashlib
import os
import uuid
from collections.abc import Iterator
from pathlib import Path

from graphmill._output_kinds import (
    FOLDER_KINDS,
    OutputPathError,
    ensure_replaceable,
    existing_kind,
    first_missing_ancestor,
    os_error,
    remove_if_empty,
    remove_tree,
)

__all__ = [
    "OutputPathError",
    "atomic_directory",
    "ensure_replaceable",
    "existing_kind",
    "publish_file",
    "sha256_file",
    "write_bytes_atomic",
]


#: scratch left by a process killed mid-publish is swept once it is this old (seconds)
STALE_SCRATCH_S = 3600


def sweep_scratch(target: Path, *, older_than_s: float = STALE_SCRATCH_S) -> list[Path]:
    """Remove ``.<name>.writing-*`` / ``.<name>.retired-*`` siblings of ``target`` that a killed
    process left (only those older than ``older_than_s``, so a publish in progress elsewhere
    is never disturbed). Returns what was removed."""
    import time

    target = Path(target)
    removed: list[Path] = []
    try:
        prefix = f".{target.name}."
        siblings = [p for p in target.parent.iterdir() if p.name.startswith(prefix)]
    except OSError:
        return removed
    now = time.time()
    for path in siblings:
        tag = path.name[len(target.name) + 2 :]
        if not tag.startswith(("writing-", "retired-")) or len(tag) != len("writing-") + 8:
            continue
        try:
            if now - path.lstat().st_mtime < older_than_s:
                continue
        except OSError:
            continue
        remove_tree(path)
        removed.append(path)
    return removed


def _infer_kind(scratch: Path) -> str | None:
    return next((k for k, name in FOLDER_KINDS.items() if (scratch / name).exists()), None)


@contextlib.contextmanager
def atomic_directory(
    target: Path, *, kind: str | None = None, key: str | None = None
) -> Iterator[Path]:
    """Yield an empty sibling folder; on success it replaces ``target``, on error it vanishes.

    Readers see either the old ``target`` or the complete new one, never a half-written one.
    An existing ``target`` must be an earlier output of ``kind`` (inferred from what the
    folder holds when None; see :func:`ensure_replaceable`).
    """
    target = Path(target)
    name = key or f"output.{kind or 'folder'}"
    ensure_replaceable(target, kind or "output", name, any_kind=kind is None)
    sweep_scratch(target)
    created = first_missing_ancestor(target.parent)
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        scratch = target.with_name(f".{target.name}.writing-{uuid.uuid4().hex[:8]}")
        scratch.mkdir()
    except OSError as exc:
        remove_if_empty(created)
        raise os_error(exc, name) from None
    try:
        yield scratch
        final_kind = kind or _infer_kind(scratch) or "folder"
        name = key or f"output.{final_kind}"
        ensure_replaceable(target, final_kind, name)
        _fsync_tree(scratch)
        _swap_in(scratch, target)
    except OSError as exc:
        remove_tree(scratch)
        remove_if_empty(created)
        if exc.filename is not None and str(exc.filename).startswith(str(target.parent)):
            raise os_error(exc, name) from None
        raise
    except BaseException:
        remove_tree(scratch)
        remove_if_empty(created)
        raise


def _swap_in(scratch: Path, target: Path) -> None:
    """Rename ``scratch`` to ``target``; an existing ``target`` is retired and removed, or put
    back if the rename fails."""
    if not target.exists():
        os.replace(scratch, target)
        return
    retired = target.with_name(f".{target.name}.retired-{uuid.uuid4().hex[:8]}")
    os.replace(target, retired)
    try:
        os.replace(scratch, target)
    except BaseException:
        os.replace(retired, target)
        raise
    remove_tree(retired)


def publish_file(path: Path, data: bytes, *, kind: str, key: str) -> None:
    """Write ``data`` to ``path`` atomically, replacing only an earlier output of ``kind``."""
    path = Path(path)
    ensure_replaceable(path, kind, key)
    sweep_scratch(path)
    created = first_missing_ancestor(path.parent)
    try:
        write_bytes_atomic(path, data)
    except OSError as exc:
        remove_if_empty(created)
        raise os_error(exc, key) from None
    except BaseException:
        remove_if_empty(created)
        raise


def write_bytes_atomic(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file and a rename."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    scratch = path.with_name(f".{path.name}.writing-{uuid.uuid4().hex[:8]}")
    try:
        with open(scratch, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(scratch, path)
    except BaseException:
        scratch.unlink(missing_ok=True)
        raise


def sha256_file(path: Path, chunk: int = 1 << 20) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        while block := fh.read(chunk):
            digest.update(block)
    return digest.hexdigest()


def _fsync_tree(root: Path) -> None:
    for path in root.rglob("*"):
        if path.is_file():
            with open(path, "rb") as fh:
                os.fsync(fh.fileno())
