"""Plugins by name, imported only when used: the one mechanism behind the source and engine
registries.

A registry maps a kind to ``"package.module:ClassName"`` and the extra that installs its
dependencies; other packages add kinds through an entry-point group.
"""

from __future__ import annotations

import difflib
import importlib
from importlib.metadata import entry_points
from typing import Any

from graphmill.errors import MissingExtraError, SpecError

#: kind -> (import path, extra that provides its dependencies; "" = the core install)
Builtins = dict[str, tuple[str, str]]


def available(builtins: Builtins, group: str) -> list[str]:
    """Every kind known: built in and registered by installed packages."""
    kinds = set(builtins)
    kinds.update(ep.name for ep in entry_points(group=group))
    return sorted(kinds)


def load_class(
    kind: str, builtins: Builtins, group: str, *, what: str, key_path: str, fallback: str = ""
) -> Any:
    """The class registered for ``kind``; :class:`SpecError` naming ``key_path`` (with a
    did-you-mean) if unknown, :class:`MissingExtraError` if its package is missing.
    ``what`` names the registry in messages ("source kind", "engine"); ``fallback`` is
    advice added to the install hint."""
    target, extra = builtins.get(kind, ("", ""))
    if not target:
        found = [ep for ep in entry_points(group=group) if ep.name == kind]
        if not found:
            kinds = available(builtins, group)
            close = difflib.get_close_matches(kind, kinds, n=1)
            maybe = f"did you mean {close[0]!r}? " if close else ""
            raise SpecError(
                f"unknown {what} {kind!r}",
                key_path=key_path,
                hint=f"{maybe}use one of: {', '.join(kinds)}",
            )
        target = found[0].value
    module_name, _, class_name = target.partition(":")
    try:
        module = importlib.import_module(module_name)
    except ImportError as exc:
        if (exc.name or "").startswith("graphmill"):
            raise MissingExtraError(
                f"{what} {kind!r} is not part of this installation ({exc.name} is missing)"
            ) from exc
        install = f"pip install 'graphmill[{extra}]'" if extra else f"pip install {exc.name}"
        raise MissingExtraError(
            f"{what} {kind!r} needs a package that is not installed ({exc.name})",
            hint=f"install it with: {install}{fallback}",
        ) from exc
    return getattr(module, class_name)
