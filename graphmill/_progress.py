"""Progress reporting: rich bars on a terminal, silence otherwise.

Stages count rows, not steps: a pull task counts the rows staged (or MiB of an RDF file
read), merge, check and build tasks count the snapshot's rows each step went through, with
the snapshot's row counts (``snapshot.json``) as totals. Bars are drawn on stderr, and only
when stderr is a terminal and no CI system is running us (``CI`` set).
"""

from __future__ import annotations

import os
import sys
import threading
from collections.abc import Iterator, Mapping
from contextlib import contextmanager
from typing import Protocol


class ProgressTask(Protocol):
    def advance(self, amount: int = 1) -> None: ...

    def describe(self, description: str) -> None: ...


class Progress(Protocol):
    def task(self, description: str, total: int | None = None) -> ProgressTask: ...


class _SilentTask:
    def advance(self, amount: int = 1) -> None:
        return None

    def describe(self, description: str) -> None:
        return None


class SilentProgress:
    """Reports nothing; the default when stdout is not a terminal or ``--json`` is set."""

    def task(self, description: str, total: int | None = None) -> ProgressTask:
        return _SilentTask()


class _RichTask:
    """One bar; hidden once it reaches its total, so that the bars still running stay in
    view on a short terminal (a stage can have dozens of steps)."""

    def __init__(
        self, bar: object, task_id: object, lock: threading.Lock, total: int | None
    ) -> None:
        self._bar, self._id, self._lock = bar, task_id, lock
        self._left = total

    def advance(self, amount: int = 1) -> None:
        with self._lock:
            self._bar.advance(self._id, amount)  # type: ignore[attr-defined]
            if self._left is not None:
                self._left -= amount
                if self._left <= 0:
                    self._bar.update(self._id, visible=False)  # type: ignore[attr-defined]

    def describe(self, description: str) -> None:
        with self._lock:
            self._bar.update(self._id, description=description)  # type: ignore[attr-defined]


class RichProgress:
    def __init__(self, bar: object) -> None:
        self._bar = bar
        self._lock = threading.Lock()

    def task(self, description: str, total: int | None = None) -> ProgressTask:
        with self._lock:
            task_id = self._bar.add_task(description, total=total)  # type: ignore[attr-defined]
        return _RichTask(self._bar, task_id, self._lock, total)


def in_ci(environ: Mapping[str, str] | None = None) -> bool:
    """Whether a CI system runs us: ``CI`` (in ``environ``, default the process's) is set to
    anything but empty, 0, false or no. CI systems set ``CI=true``, and a log is no place
    for bars that redraw themselves.

    >>> in_ci({"CI": "true"}), in_ci({"CI": "1"}), in_ci({"CI": "false"}), in_ci({})
    (True, True, False, False)
    """
    value = (os.environ if environ is None else environ).get("CI", "")
    return value.strip().lower() not in ("", "0", "false", "no")


def shows_bars() -> bool:
    """Whether bars would be shown by default: stderr is a terminal and not in CI."""
    return sys.stderr.isatty() and not in_ci()


@contextmanager
def progress_for_terminal(enabled: bool | None = None) -> Iterator[Progress]:
    """Rich progress bars on stderr when ``enabled`` or, if None, when :func:`shows_bars`.

    What the command prints to stdout is left alone unless stdout is the terminal too (then
    it is printed above the bars), so redirected output never holds bar characters.
    """
    show = shows_bars() if enabled is None else enabled
    if not show:
        yield SilentProgress()
        return
    from rich.console import Console
    from rich.progress import (
        BarColumn,
        MofNCompleteColumn,
        TextColumn,
        TimeElapsedColumn,
        TimeRemainingColumn,
    )
    from rich.progress import Progress as RichBar

    with RichBar(
        TextColumn("{task.description}"),
        BarColumn(),
        MofNCompleteColumn(),
        TimeElapsedColumn(),
        TimeRemainingColumn(),
        console=Console(stderr=True),
        transient=True,
        redirect_stdout=sys.stdout.isatty(),
    ) as bar:
        yield RichProgress(bar)
