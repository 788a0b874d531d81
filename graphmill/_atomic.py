"""Atomic publication of output folders and files: written aside, then renamed into place."""

from __future__ import annotations

import contextlib
import hashlib
import os
import shutil
import uuid
from collections.abc import Iterator
from pathlib import Path


@contextlib.contextmanager
def atomic_directory(target: Path) -> Iterator[Path]:
    """Yield an empty sibling folder; on success it replaces ``target``, on error it vanishes.

    Readers see either the old ``target`` or the complete new one, never a half-written one.
    """
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    scratch = target.with_name(f".{target.name}.writing-{uuid.uuid4().hex[:8]}")
    scratch.mkdir()
    try:
        yield scratch
        _fsync_tree(scratch)
        if target.exists():
            retired = target.with_name(f".{target.name}.retired-{uuid.uuid4().hex[:8]}")
            os.replace(target, retired)
            os.replace(scratch, target)
            shutil.rmtree(retired, ignore_errors=True)
        else:
            os.replace(scratch, target)
    except BaseException:
        shutil.rmtree(scratch, ignore_errors=True)
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
