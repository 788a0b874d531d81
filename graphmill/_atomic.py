"""Atomic publication of outputs: written aside, then renamed into place.

Only what is recognisably an earlier graphmill output of the same kind is ever replaced:

- a folder (``snapshot``, ``bundle``) whose own document names its kind: ``snapshot.json``
  with ``snapshot_format``, ``manifest.json`` with ``bundle_format`` (the files every
  published folder of that kind holds; no extra marker file, so a bundle holds exactly the
  files its manifest lists); an empty folder;
- a file (``report``, ``junit``) that parses as a graphmill report / graphmill JUnit XML, or
  an empty file.

Anything else is refused with :class:`OutputPathError` (exit 2) naming the output key. OS
errors on the output side (no permission, read-only, a file where a folder must go) become the
same one-line error. No ``.writing-*`` or ``.retired-*`` sibling outlives the call.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import logging
import os
import shutil
import uuid
from collections.abc import Iterator
from pathlib import Path

from graphmill.errors import ExitCode, GraphmillError

STALE_NOTE = ".graphmill-stale.json"
STALE_SUFFIX = ".stale"
FOLDER_KINDS = {"snapshot": "snapshot.json", "bundle": "manifest.json"}
FORMAT_KEYS = {"snapshot": "snapshot_format", "bundle": "bundle_format"}
FILE_KINDS = ("report", "junit")

log = logging.getLogger("graphmill.publish")


class OutputPathError(GraphmillError):
    """An output path cannot be written, or holds something graphmill did not write."""

    exit_code = ExitCode.BAD_INPUT


def read_stale_note(folder: Path) -> dict[str, object] | None:
    """The note of a bundle moved aside by a failed run (see :func:`retire_bundle`), or None."""
    try:
        document = json.loads((Path(folder) / STALE_NOTE).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return document if isinstance(document, dict) else None


def retire_bundle(bundle: Path, reason: str) -> Path | None:
    """Move an earlier bundle at ``bundle`` aside to ``<bundle>.stale`` (replacing an earlier
    stale one) with a note saying why, so that nothing picks it up as current. Returns the new
    place, or None when there was no bundle of ours there."""
    bundle = Path(bundle)
    if existing_kind(bundle) != "bundle":
        return None
    stale = Path(f"{bundle}{STALE_SUFFIX}")
    if existing_kind(stale) not in ("absent", "empty", "bundle"):
        return None  # something else lives there: leave both alone
    if stale.exists():
        remove_tree(stale)
    os.replace(bundle, stale)
    note = {"stale": True, "reason": reason, "was": str(bundle)}
    (stale / STALE_NOTE).write_text(json.dumps(note, sort_keys=True, indent=2) + "\n")
    return stale


def existing_kind(path: Path) -> str | None:
    """What graphmill output ``path`` holds: a kind, ``"empty"``, ``"absent"``, or None
    when it is something graphmill did not write."""
    path = Path(path)
    if not path.exists() and not path.is_symlink():
        return "absent"
    if path.is_symlink():
        return None
    if path.is_dir():
        try:
            if not any(path.iterdir()):
                return "empty"
        except OSError:
            return None
        for kind, name in FOLDER_KINDS.items():
            with contextlib.suppress(OSError, ValueError):
                document = json.loads((path / name).read_text(encoding="utf-8"))
                if isinstance(document, dict) and FORMAT_KEYS[kind] in document:
                    return kind
        return None
    if not path.is_file():
        return None
    return _file_kind(path)


def _file_kind(path: Path) -> str | None:
    try:
        if path.stat().st_size == 0:
            return "empty"
        data = path.read_bytes()
    except OSError:
        return None
    with contextlib.suppress(ValueError):
        document = json.loads(data.decode("utf-8"))
        if isinstance(document, dict) and "report_format" in document:
            return "report"
        return None
    import xml.etree.ElementTree as ET

    with contextlib.suppress(ET.ParseError, ValueError):
        root = ET.fromstring(data)
        if root.tag == "testsuites" and root.get("name") == "graphmill checks":
            return "junit"
    return None


def ensure_replaceable(path: Path, kind: str, key: str) -> None:
    """Raise :class:`OutputPathError` unless ``path`` is absent, empty, or an earlier
    graphmill output of ``kind``."""
    try:
        found = existing_kind(Path(path))
    except OSError as exc:  # e.g. a name too long for the file system
        raise _os_error(exc, key) from None
    if found in ("absent", "empty", kind):
        if found == "empty" and kind in FOLDER_KINDS and not Path(path).is_dir():
            found = None  # an empty file where a folder goes
        elif found == "empty" and kind in FILE_KINDS and Path(path).is_dir():
            found = None  # an empty folder where a file goes
        else:
            return
    what = "a folder" if Path(path).is_dir() else "a file"
    if found is not None:
        what = f"graphmill's {found}"
    raise OutputPathError(
        f"{str(path)!r} holds {what}, not an earlier graphmill {kind}; it is left untouched",
        key_path=key,
        hint=f"move it away or choose another path for {key}",
    )


def _os_error(exc: OSError, key: str) -> OutputPathError:
    reason = exc.strerror or type(exc).__name__
    where = exc.filename if exc.filename is not None else "the output"
    return OutputPathError(
        f"cannot write {str(where)!r}: {reason}",
        key_path=key,
        hint=f"check that {key} names a writable place (folders, permissions, free space)",
    )


@contextlib.contextmanager
def output_errors(key: str, *roots: Path) -> Iterator[None]:
    """Turn an ``OSError`` on a path at or under one of ``roots`` into :class:`OutputPathError`
    naming ``key`` (no permission, read-only file system, disk full); others pass through."""
    try:
        yield
    except OSError as exc:
        names = [str(n) for n in (exc.filename, exc.filename2) if n is not None]
        prefixes = [str(Path(r)) for r in roots]
        if any(n == p or n.startswith(p + os.sep) for n in names for p in prefixes):
            raise _os_error(exc, key) from None
        raise


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
    if kind is not None:
        ensure_replaceable(target, kind, name)
    elif existing_kind(target) is None:
        ensure_replaceable(target, "output", name)
    created = first_missing_ancestor(target.parent)
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        scratch = target.with_name(f".{target.name}.writing-{uuid.uuid4().hex[:8]}")
        scratch.mkdir()
    except OSError as exc:
        raise _os_error(exc, name) from None
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
            raise _os_error(exc, name) from None
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


def remove_tree(path: Path) -> None:
    """Remove a folder (or file) we wrote; a folder made read-only is made writable first."""
    if path.is_dir() and not path.is_symlink():
        try:
            shutil.rmtree(path)
        except OSError:
            for folder, _, _ in os.walk(path):
                with contextlib.suppress(OSError):
                    os.chmod(folder, 0o700)
            shutil.rmtree(path, ignore_errors=True)
    else:
        with contextlib.suppress(FileNotFoundError):
            path.unlink()
    if path.exists():
        log.warning("could not remove %s; remove it by hand", path)


def first_missing_ancestor(path: Path) -> Path | None:
    """The outermost folder on the way to ``path`` (itself included) that does not exist."""
    missing = None
    for candidate in [Path(path), *Path(path).parents]:
        if candidate.exists() or candidate.is_symlink():
            break
        missing = candidate
    return missing


def remove_if_empty(folder: Path | None) -> None:
    """Remove ``folder`` if it holds nothing but empty folders (what a failed write made)."""
    if folder is None or not folder.is_dir():
        return
    if any(not p.is_dir() for p in folder.rglob("*")):
        return
    shutil.rmtree(folder, ignore_errors=True)


def publish_file(path: Path, data: bytes, *, kind: str, key: str) -> None:
    """Write ``data`` to ``path`` atomically, replacing only an earlier output of ``kind``."""
    path = Path(path)
    ensure_replaceable(path, kind, key)
    created = first_missing_ancestor(path.parent)
    try:
        write_bytes_atomic(path, data)
    except OSError as exc:
        remove_if_empty(created)
        raise _os_error(exc, key) from None
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
