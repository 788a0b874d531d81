"""The command line: one-line messages with locations, documented exit codes, no half output."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from graphmill.cli import main
from graphmill.errors import ExitCode

TABLE_SPEC = """\
spec_version: 1
source:
  kind: table-files
  vertex_files: [{{path: people.csv, id_column: ref, type: person}}]
  edge_files: [{{path: knows.csv, source_column: a, target_column: b, relation: knows}}]
vertex_types:
  person: {{properties: {{age: {{kind: integer}}}}}}
relations: [{{from: person, name: knows, to: person}}]
output: {{bundle: {out}}}
"""


def run_cli(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "graphmill.cli", *args],
        capture_output=True,
        text=True,
        timeout=120,
        env={**os.environ, "COLUMNS": "200"},
    )


def leftovers(folder: Path) -> list[str]:
    """Anything an aborted command left: outputs, scratch folders."""
    return sorted(p.name for p in folder.iterdir() if p.name.startswith((".out", "out")))


@pytest.fixture
def table_project(tmp_path, write):
    write("people.csv", "ref,age\np1,30\np2,41\n")
    write("knows.csv", "a,b\np1,p2\n")
    return write("spec.yaml", TABLE_SPEC.format(out="out/bundle"))


def test_pull_json_reports_counts(table_project):
    done = run_cli("pull", str(table_project), "--json")
    assert done.returncode == 0, done.stderr
    info = json.loads(done.stdout)
    assert info["vertex_counts"] == {"person": 2}
    assert info["edge_counts"] == {"person.knows.person": 1}


def test_typo_in_spec_key(tmp_path, write):
    spec = write(
        "spec.yaml", TABLE_SPEC.format(out="out/bundle").replace("relations:", "relatoins:")
    )
    done = run_cli("pull", str(spec))
    assert done.returncode == ExitCode.BAD_INPUT
    lines = done.stderr.strip().splitlines()
    assert len(lines) == 1
    assert str(spec) in lines[0] and "'relatoins'" in lines[0] and "'relations'" in lines[0]
    assert "Traceback" not in done.stderr
    assert leftovers(tmp_path) == []


def test_csv_missing_column(tmp_path, write, table_project):
    write("knows.csv", "a,c\np1,p2\n")
    done = run_cli("pull", str(table_project))
    assert done.returncode == ExitCode.BAD_INPUT
    assert done.stderr.count("\n") == 1
    assert "knows.csv:1" in done.stderr and "missing column 'b'" in done.stderr
    assert leftovers(tmp_path) == []


def test_unreadable_file(tmp_path, table_project):
    (tmp_path / "people.csv").unlink()
    (tmp_path / "people.csv").mkdir()  # a folder where a file should be
    done = run_cli("pull", str(table_project))
    assert done.returncode == ExitCode.SOURCE_UNREADABLE
    assert "people.csv" in done.stderr and done.stderr.count("\n") == 1
    assert leftovers(tmp_path) == []


def test_malformed_ntriples_line(tmp_path, write):
    pytest.importorskip("pyoxigraph")
    write(
        "g.nt",
        "<http://ex.org/a> <http://www.w3.org/1999/02/22-rdf-syntax-ns#type> <http://ex.org/T> .\n"
        '<http://ex.org/a> <http://ex.org/p> "unterminated .\n',
    )
    spec = write(
        "spec.yaml",
        "spec_version: 1\n"
        "source: {kind: rdf-file, paths: [g.nt]}\n"
        "rdf: {prefixes: {ex: 'http://ex.org/'}}\n"
        "vertex_types: {t: {match: 'ex:T', properties: {p: {from: 'ex:p'}}}}\n"
        "output: {bundle: out/bundle}\n",
    )
    done = run_cli("pull", str(spec))
    assert done.returncode == ExitCode.BAD_INPUT, done.stderr
    assert "g.nt:2" in done.stderr and done.stderr.count("\n") == 1
    assert leftovers(tmp_path) == []


def test_json_mode_error_document(tmp_path, write):
    spec = write("spec.yaml", "spec_version: 2\n")
    code = main(["check", str(spec), "--json"])
    assert code == ExitCode.BAD_INPUT


def test_schema_command_prints_a_schema(capsys):
    assert main(["schema", "spec"]) == 0
    assert json.loads(capsys.readouterr().out)["title"].startswith("graphmill pipeline spec")
