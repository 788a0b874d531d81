"""The terminal progress display: when it shows, and that finished bars leave the screen."""

from __future__ import annotations

import io

import pytest
from rich.console import Console
from rich.progress import Progress as RichBar

from graphmill._progress import RichProgress, SilentProgress, in_ci, progress_for_terminal


@pytest.mark.parametrize(
    ("value", "expected"),
    [("true", True), ("1", True), ("yes", True), ("", False), ("0", False), ("false", False)],
)
def test_ci_is_any_value_but_empty_or_false(value: str, expected: bool) -> None:
    # CI=true is what GitHub Actions and GitLab CI set (common practice)
    assert in_ci({"CI": value}) is expected


def test_no_bars_in_ci_or_off_a_terminal(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("CI", "true")
    with progress_for_terminal() as progress:
        assert isinstance(progress, SilentProgress)
    monkeypatch.delenv("CI")
    with progress_for_terminal() as progress:  # pytest's captured stderr is no terminal
        assert isinstance(progress, SilentProgress)
    with progress_for_terminal(False) as progress:
        assert isinstance(progress, SilentProgress)


def test_a_bar_leaves_the_screen_when_it_reaches_its_total() -> None:
    screen = Console(file=io.StringIO(), force_terminal=True, width=100)
    bar = RichBar(console=screen, auto_refresh=False)
    progress = RichProgress(bar)
    rows = progress.task("map edges", total=5)
    staged = progress.task("pull edges knows")  # no total: stays until the display ends
    rows.advance(3)
    staged.advance(7)
    assert [t.visible for t in bar.tasks] == [True, True]
    rows.advance(2)
    assert [t.visible for t in bar.tasks] == [False, True]
    assert [t.completed for t in bar.tasks] == [5, 7]
