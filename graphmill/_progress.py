"""Progress reporting: rich bars on a terminal, silence otherwise."""

from __future__ import annotations

import sys
import threading
from collections.abc import Iterator
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
    def __init__(self, bar: object, task_id: object, lock: threading.Lock) -> None:
        self._bar, self._id, self._lock = bar, task_id, lock

    def advance(self, amount: int = 1) -> None:
        with self._lock:
            self._bar.advance(self._id, amount)  # type: ignore[attr-defined]

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
        return _RichTask(self._bar, task_id, self._lock)


@contextmanager
def progress_for_terminal(enabled: bool | None = None) -> Iterator[Progress]:
    """Rich progress bars (on stderr) when ``enabled`` or, if None, when stdout is a terminal."""
    show = sys.stdout.isatty() if enabled is None else enabled
    if not show:
        yield SilentProgress()
        return
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
        transient=True,
    ) as bar:
        yield RichProgress(bar)
