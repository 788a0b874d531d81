"""Progress bars on the command line: drawn on a terminal, never under ``--no-progress``,
``--json`` or ``CI``, and never into output that is not a terminal.

The command runs in a child process on a real pseudo-terminal (``pty``), so that the check
for a terminal is the real one; the first test shows that bars do appear there, which is
what makes the quiet cases mean something.
"""

from __future__ import annotations

import os
import pty
import subprocess
import sys
from pathlib import Path

import pytest

SPEC = """\
spec_version: 1
source:
  kind: table-files
  vertex_files: [{path: people.csv, id_column: ref, type: person}]
  edge_files: [{path: knows.csv, source_column: a, target_column: b, relation: knows}]
vertex_types:
  person: {properties: {age: {kind: integer}}}
relations: [{from: person, name: knows, to: person}]
output: {bundle: out/bundle}
"""
#: What live bars write and a plain report never does: the escapes that hide the cursor
#: while they are drawn and erase a line to redraw it (ECMA-48 EL; DEC private mode 25, as
#: rich.live and rich.control write them, from their source). The report's own tables use
#: the same box characters as a bar, so those tell nothing.
BAR_MARKS = ("\x1b[?25l", "\x1b[2K")


@pytest.fixture
def project(tmp_path: Path) -> Path:
    (tmp_path / "people.csv").write_text(
        "ref,age\n" + "".join(f"p{i},{20 + i % 50}\n" for i in range(2000)), encoding="utf-8"
    )
    (tmp_path / "knows.csv").write_text(
        "a,b\n" + "".join(f"p{i % 2000},p{(i * 7 + 1) % 2000}\n" for i in range(6000)),
        encoding="utf-8",
    )
    (tmp_path / "spec.yaml").write_text(SPEC, encoding="utf-8")
    return tmp_path / "spec.yaml"


def _environment(**extra: str) -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if k != "CI"}
    return {**env, "TERM": "xterm-256color", "COLUMNS": "120", **extra}


def on_terminal(*args: str, piped: list[str] | None = None, **env: str) -> tuple[int, str]:
    """Run ``graphmill ARGS`` with stderr (and stdout, unless ``piped`` is given: then
    stdout goes to a pipe and its text into ``piped``) on a pseudo-terminal; its exit code
    and everything it wrote on the terminal."""
    leader, follower = pty.openpty()
    child = subprocess.Popen(
        [sys.executable, "-m", "graphmill.cli", *args],
        stdin=subprocess.DEVNULL,
        stdout=follower if piped is None else subprocess.PIPE,
        stderr=follower,
        env=_environment(**env),
    )
    os.close(follower)
    chunks = []
    while True:
        try:
            chunk = os.read(leader, 65536)
        except OSError:  # EIO: the child closed the terminal (Linux)
            break
        if not chunk:
            break
        chunks.append(chunk)
    os.close(leader)
    out, _ = child.communicate(timeout=120)  # small: the pipe cannot fill up meanwhile
    if piped is not None:
        piped.append(out.decode("utf-8"))
    return child.returncode, b"".join(chunks).decode("utf-8", "replace")


def has_bars(text: str) -> bool:
    return any(mark in text for mark in BAR_MARKS)


def test_a_terminal_shows_bars(project: Path) -> None:
    code, text = on_terminal("run", str(project))
    assert code == 0, text
    assert has_bars(text)


def test_bars_go_to_stderr_and_redirected_output_stays_clean(project: Path) -> None:
    piped: list[str] = []
    code, text = on_terminal("run", str(project), piped=piped)
    assert code == 0, text
    assert has_bars(text)  # stderr is the terminal
    assert "person.knows.person" in piped[0]
    assert not has_bars(piped[0])


@pytest.mark.parametrize(
    ("flags", "env"),
    [(["--no-progress"], {}), (["--json"], {}), ([], {"CI": "true"})],
    ids=["no-progress", "json", "ci"],
)
def test_no_bars_when_asked_or_in_ci(project: Path, flags: list[str], env: dict[str, str]) -> None:
    code, text = on_terminal("run", str(project), *flags, **env)
    assert code == 0, text
    assert "person.knows.person" in text  # the command's own output is there
    assert not has_bars(text)


def test_no_bars_when_not_a_terminal(project: Path) -> None:
    done = subprocess.run(
        [sys.executable, "-m", "graphmill.cli", "run", str(project)],
        capture_output=True,
        text=True,
        timeout=120,
        env=_environment(),
    )
    assert done.returncode == 0, done.stderr
    assert "person.knows.person" in done.stdout
    assert not has_bars(done.stdout + done.stderr)
