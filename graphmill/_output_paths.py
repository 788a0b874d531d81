"""Output paths that cannot destroy inputs: the checks run once, when a spec is loaded.

An output (``output.snapshot``, ``output.bundle``, ``output.report``, ``output.junit``) is
refused with :class:`~graphmill.errors.SpecError` (exit 2) naming its key when it

- equals or contains an input the source reads (``source.vertex_files[i].path``,
  ``source.edge_files[i].path``, ``source.paths[i]``, ``source.tls.ca_file``), the spec file
  or the spec's own folder;
- equals, contains or lies inside another output (or a folder graphmill writes beside one:
  ``<snapshot>.staging``, ``<bundle>.stale``);
- lies under an existing regular file, or starts with ``~user`` for a user who does not exist.

Paths are compared after resolving ``..`` and symbolic links, so two spellings of one place
are one place.
"""

from __future__ import annotations

import contextlib
import os
from pathlib import Path
from typing import TYPE_CHECKING, Any

from graphmill.errors import SpecError

if TYPE_CHECKING:
    from graphmill.spec import PipelineSpec

#: Output keys, in the order they are checked and named.
OUTPUT_KEYS = ("snapshot", "bundle", "report", "junit")
#: Folders written beside an output: the pull's staging folder, a retired bundle.
BESIDE = {"snapshot": ".staging", "bundle": ".stale"}


def expand_path(path: str, base: Path) -> Path:
    """``path`` with ``~`` expanded and made absolute against ``base``; never raises.

    A ``~user`` that cannot be expanded is kept as written (``check_output_paths`` refuses it).
    """
    p = Path(path)
    with contextlib.suppress(RuntimeError):
        p = p.expanduser()
    return p if p.is_absolute() else base / p


def _real(path: Path) -> Path:
    return Path(os.path.realpath(path))


def _inputs(spec: PipelineSpec) -> list[tuple[str, str]]:
    """(key path, path as written) of every file or folder the source reads."""
    source = spec.source
    found: list[tuple[str, str]] = []
    for group in ("vertex_files", "edge_files"):
        for i, entry in enumerate(source.get(group) or []):
            if isinstance(entry, dict) and isinstance(entry.get("path"), str):
                found.append((f"source.{group}[{i}].path", entry["path"]))
    for i, path in enumerate(source.get("paths") or []):
        if isinstance(path, str):
            found.append((f"source.paths[{i}]", path))
    tls = source.get("tls")
    if isinstance(tls, dict) and isinstance(tls.get("ca_file"), str):
        found.append(("source.tls.ca_file", tls["ca_file"]))
    return found


def _unexpandable(written: str) -> bool:
    if not written.startswith("~"):
        return False
    try:
        Path(written).expanduser()
    except RuntimeError:
        return True
    return False


def _relation(output: Path, other: Path) -> str | None:
    """How ``output`` overlaps ``other``: 'is', 'contains', 'lies inside', or None."""
    if output == other:
        return "is"
    if output in other.parents:
        return "contains"
    if other in output.parents:
        return "lies inside"
    return None


def _name(key: str) -> str:
    """``output.bundle`` for a spec key, the flag itself (``--junit``) for a command option."""
    return key if key.startswith("-") else f"output.{key}"


def check_output_paths(
    spec: PipelineSpec, where: str | None = None, *, extra: dict[str, str] | None = None
) -> None:
    """Raise :class:`SpecError` naming the output key whose path would overwrite an input,
    another output, or cannot be created at all (see the module docstring). ``extra`` adds
    outputs named on the command line (``{"--junit": "path as typed"}``, relative to the
    working folder)."""
    raw_output: dict[str, Any] = dict(spec.raw.get("output") or {})

    def fail(key: str, message: str, hint: str) -> None:
        if key not in raw_output and not key.startswith("-"):
            message += f" (output.{key} is not set: this is its default, beside output.bundle)"
            hint = f"set output.{key} explicitly, or {hint}"
        raise SpecError(message, file=where, key_path=_name(key), hint=hint)

    outputs: list[tuple[str, Path]] = []
    for key in OUTPUT_KEYS:
        path = getattr(spec.output, key)
        if path is None:
            continue
        written = raw_output.get(key)
        if isinstance(written, str) and _unexpandable(written):
            user = written.split("/", 1)[0]
            fail(key, f"{user!r} names no user on this machine", "write a full path instead")
        outputs.append((key, _real(path)))
    for flag, typed in (extra or {}).items():
        if _unexpandable(typed):
            fail(
                flag,
                f"{typed.split('/', 1)[0]!r} names no user on this machine",
                "write a full path",
            )
        outputs.append((flag, _real(expand_path(typed, Path.cwd()))))
    # the keys the spec writes first: a clash is reported on a key the user wrote
    outputs.sort(key=lambda item: item[0] not in raw_output)
    for key, written in _inputs(spec):
        if _unexpandable(written):
            raise SpecError(
                f"{written.split('/', 1)[0]!r} names no user on this machine",
                file=where,
                key_path=key,
                hint="write a full path instead",
            )
    inputs = [("the spec's folder", _real(spec.base_dir))]
    if spec.spec_file is not None:
        inputs.append(("the spec file", _real(Path(spec.spec_file))))
    inputs += [(key, _real(spec.resolve_path(written))) for key, written in _inputs(spec)]
    beside = [(k, Path(f"{p}{BESIDE[k]}")) for k, p in outputs if k in BESIDE]
    for key, path in outputs + beside:
        for input_key, input_path in inputs:
            how = _relation(path, input_path)
            if how is None or (how == "lies inside" and input_key == "the spec's folder"):
                continue
            what = input_key if input_key.startswith("the ") else f"the input {input_key}"
            fail(
                key,
                f"the {key} path {str(path)!r} {how} {what}; writing it would destroy the input",
                "choose an output path outside the inputs, e.g. a folder 'out/' beside the spec",
            )
    _check_against_each_other(outputs, fail)
    for key, path in outputs:
        _check_parents(key, path, fail)


def _check_against_each_other(outputs: list[tuple[str, Path]], fail: Any) -> None:
    for i, (key, path) in enumerate(outputs):
        for j, (other_key, other) in enumerate(outputs):
            if i == j:
                continue
            if j > i:
                how = _relation(path, other)
                if how == "contains":  # name the inner one: it is the one to move
                    key, path, other_key, other = other_key, other, key, path
                    how = "lies inside"
                if how is not None:
                    fail(
                        key,
                        f"the {key} path {str(path)!r} {how} {_name(other_key)}'s path; "
                        "one would overwrite the other",
                        "give every output its own path, none inside another",
                    )
            suffix = BESIDE.get(other_key)
            beside = Path(f"{other}{suffix}") if suffix else None
            if beside is not None and _relation(path, beside) is not None:
                fail(
                    key,
                    f"the {key} path {str(path)!r} overlaps {str(beside)!r}, which graphmill "
                    f"writes beside {_name(other_key)}",
                    "give every output its own path, none inside another",
                )


def _check_parents(key: str, path: Path, fail: Any) -> None:
    for parent in path.parents:
        if parent.exists():
            if not parent.is_dir():
                fail(
                    key,
                    f"the {key} path {str(path)!r} lies under {str(parent)!r}, which is a file",
                    "choose a path whose folders are folders",
                )
            return
