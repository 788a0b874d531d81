"""What an output path holds, and whether graphmill may replace it.

Only what is recognisably an earlier graphmill output of the same kind is ever replaced:

- a folder (``snapshot``, ``bundle``) whose own document names its kind: ``snapshot.json``
  with ``snapshot_format``, ``manifest.json`` with ``bundle_format`` (the files every
  published folder of that kind holds; no extra marker file, so a bundle holds exactly the
  files its manifest lists); an empty folder;
- a file (``report``, ``junit``) that parses as a graphmill report / graphmill JUnit XML, or
  an empty file.

Anything else is refused with :class:`OutputPathError` (exit 2) naming the output key; OS
errors on the output side become the same one-line error. A bundle that a failed run did not
replace is moved aside by :func:`retire_bundle`.
"""

from __future__ import annotations

import contextlib
import json
import logging
import os
import re
import shutil
from collections.abc import Iterator
from pathlib import Path

from graphmill.errors import ExitCode, GraphmillError

STALE_NOTE = ".graphmill-stale.json"
STALE_SUFFIX = ".stale"
FOLDER_KINDS = {"snapshot": "snapshot.json", "bundle": "manifest.json"}
FORMAT_KEYS = {"snapshot": "snapshot_format", "bundle": "bundle_format"}
FILE_KINDS = ("report", "junit")

log = logging.getLogger("graphmill.publish")
_SCRATCH = re.compile(r"(^|/)\.([^/]+)\.writing-[0-9a-f]{8}$")


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


def ensure_replaceable(path: Path, kind: str, key: str, *, any_kind: bool = False) -> None:
    """Raise :class:`OutputPathError` unless ``path`` is absent, empty, or an earlier
    graphmill output of ``kind`` (of any kind with ``any_kind``)."""
    try:
        found = existing_kind(Path(path))
    except OSError as exc:  # e.g. a name too long for the file system
        raise os_error(exc, key) from None
    if any_kind and found is not None:
        return
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


def os_error(exc: OSError, key: str) -> OutputPathError:
    reason = exc.strerror or type(exc).__name__
    where = str(exc.filename) if exc.filename is not None else "the output"
    where = _SCRATCH.sub(r"\1\2", where)  # the path the user named, not our scratch copy
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
            raise os_error(exc, key) from None
        raise


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
