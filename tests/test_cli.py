"""The command line: one-line messages with locations, documented exit codes, no half output."""

from __future__ import annotations

import json
import os
import re
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


# --- readable output --------------------------------------------------------------------------

DANGLING_KNOWS = "a,b\np1,p2\np2,p9\np1,p8\n"  # two dangling edges in one finding


def test_inspect_prints_a_summary_and_json_only_when_asked(tmp_path, table_project):
    assert run_cli("run", str(table_project)).returncode == 0
    bundle = str(tmp_path / "out" / "bundle")
    text = run_cli("inspect", bundle)
    assert text.returncode == 0, text.stderr
    assert not text.stdout.lstrip().startswith("{")
    lines = text.stdout.splitlines()
    assert lines[0].startswith("bundle 'spec' (format 1") and lines[0].endswith("verified")
    assert any(line.split() == ["person", "2", "0", "feature", "columns"] for line in lines)
    assert any(line.split() == ["person.knows.person", "1"] for line in lines), lines
    assert "checks: passed (0 errors, " in text.stdout
    assert any(line.startswith("source: table-files") for line in lines)
    document = json.loads(run_cli("inspect", bundle, "--json").stdout)
    assert document["vertices"] == {"person": 2} and document["verified"] is True


def test_check_prints_one_line_per_finding_when_not_on_a_terminal(tmp_path, write, table_project):
    write("knows.csv", DANGLING_KNOWS)
    assert run_cli("pull", str(table_project)).returncode == 0
    done = run_cli("check", str(table_project))  # stdout is a pipe here
    assert done.returncode == 1
    lines = done.stdout.splitlines()
    dangling = [line for line in lines if " dangling-edge " in line]
    assert len(dangling) == 1, done.stdout
    assert dangling[0].startswith("error dangling-edge person.knows.person 2/3: ")
    assert "e.g." in dangling[0] and "p9" in dangling[0] and "p8" in dangling[0]
    assert "│" not in done.stdout and "┃" not in done.stdout  # no table borders
    assert lines[-1].startswith("FAILED: 1 error, ")


def test_build_prints_readable_lines_not_dict_reprs(tmp_path, write, table_project):
    write("knows.csv", "a,b\np1,p2\np1,p2\n")  # a repeated edge: dropped by the default policy
    assert run_cli("pull", str(table_project)).returncode == 0
    done = run_cli("build", str(table_project))
    assert done.returncode == 0, done.stderr
    assert "{" not in done.stdout and "'" not in done.stdout
    assert "bundle written: " in done.stdout
    assert any(line.split() == ["vertices", "person", "2"] for line in done.stdout.splitlines())
    assert "1 edge dropped" in done.stdout


def test_verbose_logs_each_stage(tmp_path, table_project):
    done = run_cli("run", str(table_project), "-v")
    assert done.returncode == 0, done.stderr
    log = done.stderr
    for words in (
        "INFO: pull: table-files source into",
        "INFO: pull vertices person",
        "INFO: pull: person: 2 rows",
        "INFO: pull: person.knows.person: 1 row\n",
        "INFO: check: ",
        " rules on ",
        "INFO: index vertices (2 to go)",  # each task, with its total in rows
        "INFO: check dangling-edge (1 to go)",
        "INFO: build: wrote ",
        "INFO: build: file manifest.json (",
        "INFO: local engine ",  # each engine query, with its wall and CPU seconds
        " s (CPU ",
    ):
        assert words in log, (words, log)
    quiet = run_cli("run", str(table_project))
    assert quiet.stderr == ""


def test_plural_forms():
    from graphmill._text import plural

    assert [plural(n, "error") for n in (0, 1, 2)] == ["0 errors", "1 error", "2 errors"]
    assert plural(1_000, "vertex", "vertices") == "1,000 vertices"
    import graphmill

    in_a_string = re.compile(r"\"[^\"\n]*[a-z]\(s\)[^\"\n]*\"")  # "unit(s)" in a message
    sources = Path(graphmill.__file__).parent.rglob("*.py")
    offenders = [
        str(p) for p in sources if in_a_string.search(p.read_text().replace("http(s)", ""))
    ]
    assert offenders == []


def test_a_negative_value_under_log_encoding_prints_a_plain_number(tmp_path, write):
    write("people.csv", "ref,age\np1,30\np2,-5\n")
    write("knows.csv", "a,b\np1,p2\n")
    spec = write(
        "spec.yaml",
        TABLE_SPEC.format(out="out/bundle")
        + "features: {person: [{property: age, encoding: log}]}\n",
    )
    done = run_cli("run", str(spec))
    assert "np.float64" not in done.stderr + done.stdout
    assert "value -5 is negative" in done.stderr, done.stderr
