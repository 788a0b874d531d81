"""Stopping a pull partway, the way an interrupted process would: shared by the resume tests
of every source (tests/test_resume.py, tests/connectors/gremlin/test_gremlin_faults.py)."""

from __future__ import annotations


class StopAfter:
    """A progress reporter that stops the pull after ``pages`` staged pages: the page is
    written and its checkpoint saved, then the pull raises :class:`StopAfter.StopError`."""

    class StopError(Exception):
        pass

    def __init__(self, pages: int) -> None:
        self.left = pages

    def task(self, description: str, total: int | None = None) -> StopAfter:
        return self

    def advance(self, amount: int = 1) -> None:
        self.left -= 1
        if self.left <= 0:
            raise self.StopError()
