"""Output paths that would overwrite an input, another output or something graphmill did not
write; output paths that cannot be written at all; and the exit codes of a missing snapshot or
bundle. Generated as combinations: every output key against every kind of input (CSV vertex
file, CSV edge file, Parquet file, RDF dump, the spec file, the spec's folder, the data folder),
as the same path, a folder holding it, or a path inside it; outputs against each other; existing
foreign files and folders at an output path; paths under a regular file; ``~unknownuser``.

Every case expects exit 2 (or 8 for a missing snapshot/bundle), one line naming the output key,
and every input unchanged with nothing left behind (checked by ``test_corpus.py``).
"""

from __future__ import annotations

import io
from collections.abc import Callable
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

from tests.bad_inputs._corpus import (
    GOOD_KNOWS,
    GOOD_PEOPLE,
    Case,
    FileText,
    spec_argv,
    table_spec,
)

OUTPUT_KEYS = ("bundle", "snapshot", "report", "junit")
COMMANDS = ("pull", "check", "build", "run")
UNKNOWN_USER = "~graphmill-no-such-user-4711"


def _parquet_people() -> bytes:
    table = pa.table(
        {
            "ref": ["p1", "p2", "p3", "p4"],
            "age": pa.array([30, 41, 25, 38], pa.int64()),
            "team": ["red", "blue", "red", "blue"],
        }
    )
    sink = io.BytesIO()
    pq.write_table(table, sink)
    return sink.getvalue()


RDF_GRAPH = (
    "".join(
        f"<http://example.org/{p}> <http://www.w3.org/1999/02/22-rdf-syntax-ns#type> "
        f"<http://example.org/Person> .\n"
        f'<http://example.org/{p}> <http://example.org/age> "{30 + i}"'
        f"^^<http://www.w3.org/2001/XMLSchema#integer> .\n"
        for i, p in enumerate(("p1", "p2", "p3"))
    )
    + "<http://example.org/p1> <http://example.org/knows> <http://example.org/p2> .\n"
)


def _output_yaml(outputs: dict[str, str]) -> str:
    merged = {"bundle": "out/bundle", **outputs}
    return "{" + ", ".join(f"{k}: {v!r}" for k, v in merged.items()) + "}"


def csv_project(outputs: dict[str, str]) -> dict[str, FileText]:
    """Spec in the project folder, CSV inputs under ``data/``."""
    spec = table_spec(
        vertex_file="{path: data/people.csv, id_column: ref, type: person}",
        edge_file="{path: data/knows.csv, source_column: a, target_column: b, relation: knows}",
        output=_output_yaml(outputs),
    )
    return {"spec.yaml": spec, "data/people.csv": GOOD_PEOPLE, "data/knows.csv": GOOD_KNOWS}


def parquet_project(outputs: dict[str, str]) -> dict[str, FileText]:
    spec = table_spec(
        vertex_file="{path: data/people.parquet, id_column: ref, type: person}",
        edge_file="{path: data/knows.csv, source_column: a, target_column: b, relation: knows}",
        output=_output_yaml(outputs),
    )
    return {
        "spec.yaml": spec,
        "data/people.parquet": _parquet_people(),
        "data/knows.csv": GOOD_KNOWS,
    }


def rdf_project(outputs: dict[str, str]) -> dict[str, FileText]:
    spec = (
        "spec_version: 1\n"
        "source: {kind: rdf-file, paths: [data/graph.nt]}\n"
        "rdf: {prefixes: {ex: 'http://example.org/'}}\n"
        "vertex_types:\n"
        "  person: {match: 'ex:Person', properties: {age: {from: 'ex:age', kind: integer}}}\n"
        "relations: [{from: person, name: knows, to: person, match: 'ex:knows'}]\n"
        f"output: {_output_yaml(outputs)}\n"
    )
    return {"spec.yaml": spec, "data/graph.nt": RDF_GRAPH}


Project = Callable[[dict[str, str]], dict[str, FileText]]

# (name, project, path as the spec writes it, what the message names)
INPUTS: list[tuple[str, Project, str, str]] = [
    ("csv-vertex-file", csv_project, "data/people.csv", "source.vertex_files[0].path"),
    ("csv-edge-file", csv_project, "data/knows.csv", "source.edge_files[0].path"),
    ("parquet-file", parquet_project, "data/people.parquet", "source.vertex_files[0].path"),
    ("rdf-dump", rdf_project, "data/graph.nt", "source.paths[0]"),
    ("spec-file", csv_project, "spec.yaml", "the spec file"),
]
# (name, project, folder path, what the message names)
FOLDERS: list[tuple[str, Project, str, str]] = [
    ("spec-folder-dot", csv_project, ".", "the spec's folder"),
    ("spec-folder-by-name", csv_project, "../project", "the spec's folder"),
    ("spec-folder-parent", csv_project, "..", "the spec's folder"),
    ("csv-data-folder", csv_project, "data", "source.vertex_files[0].path"),
    ("parquet-data-folder", parquet_project, "data/", "source.vertex_files[0].path"),
    ("rdf-data-folder", rdf_project, "./data", "source.paths[0]"),
]


def _command(i: int) -> str:
    return COMMANDS[i % len(COMMANDS)]


def _outputs_for(key: str, path: str) -> dict[str, str]:
    # the default bundle sits elsewhere; when the key is bundle itself, it replaces it
    return {key: path}


def input_cases() -> list[Case]:
    cases: list[Case] = []
    i = 0
    for key in OUTPUT_KEYS:
        for name, project, path, names in INPUTS:
            for how, written in (
                ("is", path),
                ("inside", f"{path}/{key}"),
                ("is-respelt", f"./data/../{path}"),
            ):
                cases.append(
                    Case(
                        name=f"output-{key}-{how}-{name}",
                        category="outputs",
                        files=project(_outputs_for(key, written)),
                        argv=spec_argv(_command(i)),
                        exit_code=2,
                        where=f"output.{key}",
                        says=names,
                    )
                )
                i += 1
        for name, project, path, names in FOLDERS:
            cases.append(
                Case(
                    name=f"output-{key}-contains-{name}",
                    category="outputs",
                    files=project(_outputs_for(key, path)),
                    argv=spec_argv(_command(i)),
                    exit_code=2,
                    where=f"output.{key}",
                    says=names,
                )
            )
            i += 1
    return cases


# pairs of outputs on the same path, or one inside the other
OVERLAPS: list[tuple[str, dict[str, str], str]] = [
    ("snapshot-is-bundle", {"snapshot": "out/b"}, "output.snapshot"),
    ("report-is-bundle", {"report": "out/b"}, "output.report"),
    ("junit-is-bundle", {"junit": "out/b"}, "output.bundle"),
    ("junit-is-report", {"report": "out/r.json", "junit": "out/r.json"}, "output.report"),
    ("snapshot-is-report", {"snapshot": "out/s", "report": "out/s"}, "output.snapshot"),
    ("snapshot-inside-bundle", {"snapshot": "out/b/snap"}, "output.snapshot"),
    ("report-inside-bundle", {"report": "out/b/report.json"}, "output.report"),
    ("junit-inside-bundle", {"junit": "out/b/junit.xml"}, "output.bundle"),
    ("bundle-inside-snapshot", {"snapshot": "out"}, "output.snapshot"),
    ("report-inside-snapshot", {"snapshot": "out/s", "report": "out/s/r.json"}, "output.snapshot"),
    ("junit-inside-snapshot", {"snapshot": "out/s", "junit": "out/s/j.xml"}, "output.snapshot"),
    ("junit-inside-report", {"report": "out/r", "junit": "out/r/j.xml"}, "output.report"),
    ("snapshot-is-bundle-staging", {"snapshot": "out/s", "junit": "out/s.staging"}, "output.junit"),
    ("report-is-bundle-stale", {"report": "out/b.stale"}, "output.report"),
    ("report-inside-staging", {"snapshot": "out/s", "report": "out/s.staging/r"}, "output.report"),
]


def overlap_cases() -> list[Case]:
    cases = []
    for i, (name, outputs, where) in enumerate(OVERLAPS):
        cases.append(
            Case(
                name=f"output-overlap-{name}",
                category="outputs",
                files=csv_project({"bundle": "out/b", **outputs}),
                argv=spec_argv(_command(i)),
                exit_code=2,
                where=where,
                says="output.",
            )
        )
    return cases


def unwritable_cases() -> list[Case]:
    cases = []
    for i, key in enumerate(OUTPUT_KEYS):
        cases.append(
            Case(
                name=f"output-{key}-under-a-regular-file",
                category="outputs",
                files={**csv_project({key: f"notes.txt/{key}"}), "notes.txt": "my notes\n"},
                argv=spec_argv(_command(i)),
                exit_code=2,
                where=f"output.{key}",
                says="which is a file",
            )
        )
        cases.append(
            Case(
                name=f"output-{key}-unknown-user",
                category="outputs",
                files=csv_project({key: f"{UNKNOWN_USER}/{key}"}),
                argv=spec_argv(_command(i + 1)),
                exit_code=2,
                where=f"output.{key}",
                says="names no user",
            )
        )
    cases.append(
        Case(
            name="input-path-unknown-user",
            category="outputs",
            files={
                "spec.yaml": table_spec(
                    vertex_file=f"{{path: {UNKNOWN_USER}/p.csv, id_column: ref, type: person}}"
                ),
                "knows.csv": GOOD_KNOWS,
            },
            argv=spec_argv("pull"),
            exit_code=2,
            where="source.vertex_files[0].path",
            says="names no user",
        )
    )
    return cases


# something graphmill did not write, where an output goes: (name, files, key, command)
FOREIGN: list[tuple[str, dict[str, FileText], str, tuple[str, ...]]] = [
    ("bundle-folder", {"out/bundle/photo.jpg": b"\xff\xd8 not ours"}, "output.bundle", ("run",)),
    ("bundle-folder-build", {"out/bundle/keep.txt": "mine\n"}, "output.bundle", ("build",)),
    ("bundle-file", {"out/bundle": "a file\n"}, "output.bundle", ("build",)),
    (
        "bundle-foreign-manifest",
        {"out/bundle/manifest.json": '{"name": "not graphmill"}\n'},
        "output.bundle",
        ("run",),
    ),
    ("snapshot-folder", {"out/snap/table.csv": "a,b\n"}, "output.snapshot", ("pull",)),
    ("snapshot-file", {"out/snap": "x\n"}, "output.snapshot", ("run",)),
    ("snapshot-holds-a-bundle", {"out/snap/manifest.json": "{}"}, "output.snapshot", ("pull",)),
    ("snapshot-staging-folder", {"out/snap.staging/a.txt": "x"}, "output.snapshot", ("pull",)),
    ("snapshot-staging-file", {"out/snap.staging": "x"}, "output.snapshot", ("run",)),
    ("report-json", {"out/report.json": '{"mine": true}\n'}, "output.report", ("check",)),
    ("report-text", {"out/report.json": "dear diary\n"}, "output.report", ("run",)),
    ("report-folder", {"out/report.json/x.txt": "x\n"}, "output.report", ("check",)),
    ("report-empty-folder", {"out/report.json/.keep": ""}, "output.report", ("check",)),
    (
        "junit-foreign-xml",
        {"out/junit.xml": "<testsuites name='other'/>"},
        "output.junit",
        ("check",),
    ),
    ("junit-text", {"out/junit.xml": "notes\n"}, "output.junit", ("run",)),
    ("junit-flag-file", {"mine.xml": "<a/>"}, "--junit", ("check", "--junit", "{dir}/mine.xml")),
    ("junit-flag-folder", {"ci/keep.txt": "x"}, "--junit", ("check", "--junit", "{dir}/ci")),
]


def foreign_cases() -> list[Case]:
    cases = []
    outputs = {
        "bundle": "out/bundle",
        "snapshot": "out/snap",
        "report": "out/report.json",
        "junit": "out/junit.xml",
    }
    for name, extra, key, command in FOREIGN:
        files = {**csv_project(outputs), **extra}
        cases.append(
            Case(
                name=f"output-foreign-{name}",
                category="outputs",
                files=files,
                argv=spec_argv(command[0], *command[1:]),
                exit_code=2,
                where=key,
                says="graphmill did not write" if "staging" in name else "not an earlier graphmill",
            )
        )
    return cases


# ``check --junit PATH``: the flag is checked like the spec's outputs
JUNIT_FLAG: list[tuple[str, str, str]] = [
    ("is-csv-vertex-file", "{dir}/data/people.csv", "source.vertex_files[0].path"),
    ("is-csv-edge-file", "{dir}/data/knows.csv", "source.edge_files[0].path"),
    ("is-spec-file", "{dir}/spec.yaml", "the spec file"),
    ("is-spec-folder", "{dir}", "the spec's folder"),
    ("contains-data-folder", "{dir}/data/..", "the spec's folder"),
    ("is-report", "{dir}/out/bundle.snapshot.report.json", "output.report"),
    ("inside-bundle", "{dir}/out/bundle/junit.xml", "output.bundle"),
    ("inside-snapshot", "{dir}/out/bundle.snapshot/j.xml", "output.snapshot"),
    ("under-a-file", "{dir}/data/people.csv/j.xml", "source.vertex_files[0].path"),
    ("unknown-user", f"{UNKNOWN_USER}/j.xml", "names no user"),
]


def junit_flag_cases() -> list[Case]:
    return [
        Case(
            name=f"output-junit-flag-{name}",
            category="outputs",
            files=csv_project({}),
            argv=spec_argv("check", "--junit", path),
            exit_code=2,
            where="--junit",
            says=says,
        )
        for name, path, says in JUNIT_FLAG
    ]


def _built_then_broken(root: Path) -> None:
    """A good run builds last week's bundle; then this week's edge file loses a column."""
    from graphmill.cli import main

    assert main(["run", str(root / "spec.yaml"), "--no-progress"]) == 0
    (root / "data" / "knows.csv").write_text("a,c\np1,p2\n")


def exit_code_cases() -> list[Case]:
    """Exit codes that fit one command and one line: a missing snapshot or bundle is 8; a
    failed run says where last week's bundle went."""
    project = csv_project({})
    return [
        Case(
            name="exit-2-failed-run-moves-the-bundle-aside",
            category="exit-codes",
            files=project,
            argv=spec_argv("run"),
            exit_code=2,
            where="knows.csv:1",
            says="The previous bundle was moved aside to {dir}/out/bundle.stale",
            setup=_built_then_broken,
            may_change=("out/bundle/",),
            may_leave=("out/bundle.stale",),
        ),
        Case(
            name="exit-8-check-without-snapshot",
            category="exit-codes",
            files=project,
            argv=spec_argv("check"),
            exit_code=8,
            where="out/bundle.snapshot",
            says="no snapshot here",
        ),
        Case(
            name="exit-8-build-without-snapshot",
            category="exit-codes",
            files=project,
            argv=spec_argv("build"),
            exit_code=8,
            where="out/bundle.snapshot",
            says="run 'graphmill pull' first",
        ),
        Case(
            name="exit-8-inspect-not-a-bundle",
            category="exit-codes",
            files={"folder/readme.txt": "x\n"},
            argv=("inspect", "{dir}/folder"),
            exit_code=8,
            where="{dir}/folder/manifest.json",
            says="not a graphmill bundle",
        ),
        Case(
            name="exit-3-missing-vertex-file",
            category="exit-codes",
            files={"spec.yaml": project["spec.yaml"], "data/knows.csv": GOOD_KNOWS},
            argv=spec_argv("run"),
            exit_code=3,
            where="people.csv",
        ),
        Case(
            name="exit-2-spec-missing",
            category="exit-codes",
            files={},
            argv=spec_argv("pull"),
            exit_code=2,
            where="{dir}/spec.yaml",
            says="spec file not found",
        ),
    ]


CASES = (
    input_cases()
    + overlap_cases()
    + unwritable_cases()
    + foreign_cases()
    + junit_flag_cases()
    + exit_code_cases()
)
