"""Engines by name, imported only when opened.

Other packages add engines through the ``graphmill.engines`` entry-point group, with a value
of the form ``"package.module:ClassName"`` (a subclass of :class:`~graphmill.engine.Engine`).
"""

from __future__ import annotations

import re
from pathlib import Path

from graphmill._plugins import available, load_class
from graphmill.engine._base import Engine
from graphmill.errors import SpecError
from graphmill.spec import EngineSpec, PipelineSpec

#: kind -> (import path, extra that provides its dependencies; "" = the core install)
BUILTIN_ENGINES: dict[str, tuple[str, str]] = {
    "local": ("graphmill.engine.local:LocalEngine", ""),
    "reference": ("graphmill.engine.reference:ReferenceEngine", ""),
    "spark": ("graphmill.engine.spark:SparkEngine", "spark"),
}
ENTRY_POINT_GROUP = "graphmill.engines"
DEFAULT_ENGINE = "local"


def available_engines() -> list[str]:
    """Every engine kind known: built in and registered by installed packages."""
    return available(BUILTIN_ENGINES, ENTRY_POINT_GROUP)


def engine_class(kind: str) -> type[Engine]:
    """The class for ``kind``; a clear error if unknown or if its package is missing."""
    cls: type[Engine] = load_class(
        kind,
        BUILTIN_ENGINES,
        ENTRY_POINT_GROUP,
        what="engine kind",
        key_path="engine.kind",
        fallback=", or set engine.kind: reference",
    )
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
    if settings.cluster is not None and settings.kind != "spark":
        raise SpecError(
            f"engine.cluster is for the spark engine, not {settings.kind!r}",
            key_path="engine.cluster",
            hint="set engine.kind: spark (or --engine spark), or leave engine.cluster out",
        )
    if settings.kind == "spark":
        from graphmill.engine.spark._session import cluster_of

        cluster_of(settings)


def spill_folder_of(spec: PipelineSpec) -> Path:
    """Where the engine may spill: the spec's ``engine.spill_folder`` or ``<bundle>.spill``."""
    return spec.engine.spill_folder or Path(f"{spec.output.bundle}.spill")


def open_engine(spec: PipelineSpec | EngineSpec) -> Engine:
    """An engine for one stage of ``spec`` (use it as a context manager to close it)."""
    if isinstance(spec, PipelineSpec):
        return engine_class(spec.engine.kind)(spec.engine, spill_folder=spill_folder_of(spec))
    return engine_class(spec.kind)(spec, spill_folder=spec.spill_folder)
