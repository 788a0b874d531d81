"""The bad-input corpus: named cases, each a small project folder plus one command.

Every case is generated here (no stored fixtures), written into a fresh folder, and run through
``graphmill.cli.main`` in-process. ``test_corpus.py`` asserts for each case: the documented exit
code, exactly one message line that names the location (``where``) and contains ``says``, no
traceback, no output or scratch file left behind (beyond ``may_leave``), every input file
byte-for-byte unchanged, and a message no longer than :data:`MAX_MESSAGE`.

Add a category as a module ``cases_<category>.py`` exposing ``CASES: list[Case]``; use the
builders below so that each case differs from a good project in one place only.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

#: The longest one-line message a case may print (quoted values in messages are capped).
MAX_MESSAGE = 600

FileText = str | bytes


@dataclass(frozen=True)
class Case:
    """One bad input and how graphmill must answer it.

    ``files`` maps relative paths to contents; ``argv`` is the command line after ``graphmill``,
    with ``{dir}`` standing for the case's folder (also in ``where`` and ``says``). ``setup``
    may prepare more (an earlier bundle, a staged pull) after the files are written; whatever
    it creates counts as input and must survive unchanged unless listed in ``may_change``.
    """

    name: str
    category: str
    files: dict[str, FileText]
    argv: tuple[str, ...]
    exit_code: int
    where: str | None = None
    says: str | None = None
    setup: Callable[[Path], None] | None = None
    may_leave: tuple[str, ...] = ()
    may_change: tuple[str, ...] = ()
    env: dict[str, str] = field(default_factory=dict)


# --- a good table-files project; cases change one thing in it ---------------------------------

GOOD_PEOPLE = "ref,age,team\np1,30,red\np2,41,blue\np3,25,red\np4,38,blue\n"
GOOD_KNOWS = "a,b\np1,p2\np2,p3\np3,p4\np4,p1\n"


def table_spec(
    *,
    source_extra: str = "",
    vertex_file: str = "{path: people.csv, id_column: ref, type: person}",
    edge_file: str = "{path: knows.csv, source_column: a, target_column: b, relation: knows}",
    properties: str = "{age: {kind: integer}, team: {kind: string}}",
    relations: str = "[{from: person, name: knows, to: person}]",
    output: str = "{bundle: out/bundle}",
    extra: str = "",
) -> str:
    """The good table-files spec as YAML text, with any part replaced."""
    return (
        "spec_version: 1\n"
        "source:\n"
        "  kind: table-files\n"
        f"  vertex_files: [{vertex_file}]\n"
        f"  edge_files: [{edge_file}]\n"
        f"{source_extra}"
        "vertex_types:\n"
        f"  person: {{properties: {properties}}}\n"
        f"relations: {relations}\n"
        f"output: {output}\n"
        f"{extra}"
    )


def table_project(
    spec: str | None = None, files: dict[str, FileText] | None = None
) -> dict[str, FileText]:
    """The good project's files: ``spec.yaml``, ``people.csv``, ``knows.csv``; ``files``
    overrides or adds any (relative paths)."""
    out: dict[str, FileText] = {
        "spec.yaml": spec if spec is not None else table_spec(),
        "people.csv": GOOD_PEOPLE,
        "knows.csv": GOOD_KNOWS,
    }
    out.update(files or {})
    return out


def spec_argv(command: str, *more: str) -> tuple[str, ...]:
    """``graphmill COMMAND {dir}/spec.yaml --no-progress MORE...``."""
    return (command, "{dir}/spec.yaml", "--no-progress", *more)
