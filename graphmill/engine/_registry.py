"""Engines by name, imported only when opened.

Other packages add engines through the ``graphmill.engines`` entry-point group, with a value
of the form ``"package.module:ClassName"`` (a subclass of :class:`~graphmill.engine.Engine`).
"""

from __future__ import annotations

import difflib
import importlib
import re
from importlib.metadata import entry_points
from pathlib import Path

from graphmill.engine._base import Engine
from graphmill.errors import MissingExtraError, SpecError
from graphmill.spec import EngineSpec, PipelineSpec

#: kind -> (import path, extra that provides its dependencies; "" = the core install)
BUILTIN_ENGINES: dict[str, tuple[str, str]] = {
    "local": ("graphmill.engine.local:LocalEngine", ""),
    "reference": ("graphmill.engine.reference:ReferenceEngine", ""),
}
ENTRY_POINT_GROUP = "graphmill.engines"
DEFAULT_ENGINE = "local"


def available_engines() -> list[str]:
    """Every engine kind known: built in and registered by installed packages."""
    kinds = set(BUILTIN_ENGINES)
    kinds.update(ep.name for ep in entry_points(group=ENTRY_POINT_GROUP))
    return sorted(kinds)


def engine_class(kind: str) -> type[Engine]:
    """The class for ``kind``; a clear error if unknown or if its package is missing."""
    target, extra = BUILTIN_ENGINES.get(kind, ("", ""))
    if not target:
        found = [ep for ep in entry_points(group=ENTRY_POINT_GROUP) if ep.name == kind]
        if not found:
            close = difflib.get_close_matches(kind, available_engines(), n=1)
            maybe = f"did you mean {close[0]!r}? " if close else ""
            raise SpecError(
                f"unknown engine kind {kind!r}",
                key_path="engine.kind",
                hint=f"{maybe}use one of: {', '.join(available_engines())}",
            )
        target = found[0].value
    module_name, _, class_name = target.partition(":")
    try:
        module = importlib.import_module(module_name)
    except ImportError as exc:
        if (exc.name or "").startswith("graphmill"):
            raise MissingExtraError(
                f"engine {kind!r} is not part of this installation ({exc.name} is missing)"
            ) from exc
        what = f"pip install 'graphmill[{extra}]'" if extra else f"pip install {exc.name}"
        raise MissingExtraError(
            f"engine {kind!r} needs a package that is not installed ({exc.name})",
            hint=f"install it with: {what}, or set engine.kind: reference",
        ) from exc
    cls: type[Engine] = getattr(module, class_name)
    return cls


_SIZE = re.compile(r"^([0-9]+(?:\.[0-9]+)?)\s*(B|KB|MB|GB|TB|KiB|MiB|GiB|TiB)$")
_UNITS = {"B": 1, "KB": 10**3, "MB": 10**6, "GB": 10**9, "TB": 10**12}
_UNITS |= {"KiB": 2**10, "MiB": 2**20, "GiB": 2**30, "TiB": 2**40}


def memory_bytes(text: str) -> int:
    """A memory size as the spec writes it, in bytes.

    >>> memory_bytes("2GiB"), memory_bytes("1.5 MB")
    (2147483648, 1500000)
    """
    match = _SIZE.match(text.strip())
    if match is None:
        raise SpecError(
            f"{text!r} is not a memory size",
            key_path="engine.memory_limit",
            hint="a number and a unit, e.g. 2GiB or 512MB",
        )
    return int(float(match.group(1)) * _UNITS[match.group(2)])


def check_settings(settings: EngineSpec) -> None:
    """Refuse an unknown engine kind or a malformed memory size before any work starts."""
    engine_class(settings.kind)
    if settings.memory_limit is not None:
        memory_bytes(settings.memory_limit)


def spill_folder_of(spec: PipelineSpec) -> Path:
    """Where the engine may spill: the spec's ``engine.spill_folder`` or ``<bundle>.spill``."""
    return spec.engine.spill_folder or Path(f"{spec.output.bundle}.spill")


def open_engine(spec: PipelineSpec | EngineSpec) -> Engine:
    """An engine for one stage of ``spec`` (use it as a context manager to close it)."""
    if isinstance(spec, PipelineSpec):
        return engine_class(spec.engine.kind)(spec.engine, spill_folder=spill_folder_of(spec))
    return engine_class(spec.kind)(spec, spill_folder=spec.spill_folder)
