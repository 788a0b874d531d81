"""Every exit code of the README's table, each pinned to a real case.

Codes 4-7 come from real servers started by ``servers/pytest_fixtures.py`` (Fuseki with HTTP
basic authentication, Gremlin Server); 9 from an optional package that genuinely fails to
import; 70 and 130 from a third-party source installed the way pip installs one (a
``*.dist-info`` folder with an entry point), whose read has a bug or is interrupted by SIGINT.
"""

from __future__ import annotations

import json
import os
import re
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
import yaml

from graphmill._inspect_text import summary_lines
from graphmill.bundle import inspect_bundle
from graphmill.cli import main
from graphmill.errors import ExitCode

REPO = Path(__file__).resolve().parents[1]
GREMLIN_HELPERS = REPO / "tests" / "connectors" / "gremlin"

PEOPLE = "ref,age\np1,30\np2,41\np3,25\n"
KNOWS = "a,b\np1,p2\np2,p3\n"
KNOWS_DANGLING = "a,b\np1,p2\np2,p9\n"  # p9 is no vertex: a dangling-edge error


def _project(root: Path, knows: str = KNOWS, **output: str) -> Path:
    root.mkdir(parents=True, exist_ok=True)
    (root / "people.csv").write_text(PEOPLE)
    (root / "knows.csv").write_text(knows)
    document = {
        "spec_version": 1,
        "source": {
            "kind": "table-files",
            "vertex_files": [{"path": "people.csv", "id_column": "ref", "type": "person"}],
            "edge_files": [
                {
                    "path": "knows.csv",
                    "source_column": "a",
                    "target_column": "b",
                    "relation": "knows",
                }
            ],
        },
        "vertex_types": {"person": {"properties": {"age": {"kind": "integer"}}}},
        "relations": [{"from": "person", "name": "knows", "to": "person"}],
        "output": {"bundle": "out/bundle", **output},
    }
    spec = root / "spec.yaml"
    spec.write_text(yaml.safe_dump(document, sort_keys=False))
    return spec


def _cli(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    code = main([*argv, "--no-progress"] if argv[0] != "inspect" else list(argv))
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def _one_line(err: str) -> str:
    lines = [line for line in err.splitlines() if line.strip()]
    assert len(lines) == 1, err
    assert "Traceback" not in err
    return lines[0]


def _leftovers(root: Path) -> list[str]:
    return sorted(p.name for p in root.rglob("*") if ".writing-" in p.name or ".retired-" in p.name)


# --- 0 and 1 ----------------------------------------------------------------------------------


def test_0_run_passes_and_builds(tmp_path, capsys):
    spec = _project(tmp_path)
    code, out, _ = _cli(capsys, "run", str(spec))
    assert code == ExitCode.OK == 0
    assert (tmp_path / "out/bundle/manifest.json").is_file()
    assert "PASSED: 0 errors" in out
    assert _cli(capsys, "inspect", str(tmp_path / "out/bundle"))[0] == 0


def test_1_check_fails(tmp_path, capsys):
    spec = _project(tmp_path, KNOWS_DANGLING)
    assert _cli(capsys, "pull", str(spec))[0] == 0
    code, out, _ = _cli(capsys, "check", str(spec))
    assert code == ExitCode.CHECKS_FAILED == 1
    assert "FAILED: 1 error," in out  # singular: one dangling edge finding


def test_1_build_refuses_without_the_flag(tmp_path, capsys):
    spec = _project(tmp_path, KNOWS_DANGLING)
    _cli(capsys, "pull", str(spec))
    code, _, err = _cli(capsys, "build", str(spec))
    assert code == 1
    assert "checks failed with 1 error finding, the first dangling-edge" in _one_line(err)
    assert not (tmp_path / "out/bundle").exists() and _leftovers(tmp_path) == []


@pytest.mark.parametrize("command", ["build", "run"])
def test_1_even_if_failing_builds_a_marked_bundle_and_still_exits_1(tmp_path, capsys, command):
    spec = _project(tmp_path, KNOWS_DANGLING)
    if command == "build":
        _cli(capsys, "pull", str(spec))
    code, out, _ = _cli(capsys, command, str(spec), "--even-if-failing")
    assert code == 1  # CI stays red
    assert "FROM FAILING CHECKS" in out
    manifest = json.loads((tmp_path / "out/bundle/manifest.json").read_text())
    assert manifest["validation"]["passed"] is False
    assert manifest["validation"]["counts"]["error"] == 1
    lines = summary_lines(inspect_bundle(tmp_path / "out/bundle"))
    assert any(line.startswith("checks: FAILED (1 error,") for line in lines), lines


def test_1_a_failed_run_moves_last_weeks_bundle_aside(tmp_path, capsys):
    spec = _project(tmp_path)
    assert _cli(capsys, "run", str(spec))[0] == 0
    before = (tmp_path / "out/bundle/manifest.json").read_bytes()
    (tmp_path / "knows.csv").write_text(KNOWS_DANGLING)  # this week's data is bad
    code, out, _ = _cli(capsys, "run", str(spec))
    assert code == 1
    assert not (tmp_path / "out/bundle").exists()  # nothing current to pick up by mistake
    stale = tmp_path / "out/bundle.stale"
    assert (stale / "manifest.json").read_bytes() == before
    assert "moved aside to" in out and str(stale) in out
    code, out, _ = _cli(capsys, "inspect", str(stale))
    assert code == 0 and out.startswith("STALE: moved aside by a run that did not finish")
    code, _, err = _cli(capsys, "inspect", str(tmp_path / "out/bundle"))
    assert code == 8 and "not a graphmill bundle" in _one_line(err)
    # the next good run builds afresh; the stale copy stays until the next failure
    (tmp_path / "knows.csv").write_text(KNOWS)
    assert _cli(capsys, "run", str(spec))[0] == 0
    assert (tmp_path / "out/bundle/manifest.json").read_bytes() == before
    assert _leftovers(tmp_path) == []


def test_1_a_run_that_errors_after_the_pull_also_moves_the_bundle_aside(tmp_path, capsys):
    spec = _project(tmp_path)
    assert _cli(capsys, "run", str(spec))[0] == 0
    (tmp_path / "people.csv").write_text("ref,age\np1,30\np2,x\np3,25\n")  # ill-typed age
    code, _, err = _cli(capsys, "run", str(spec))
    assert code in (1, 2), err
    assert not (tmp_path / "out/bundle").exists()
    assert (tmp_path / "out/bundle.stale/manifest.json").is_file()


# --- 2, 3, 8 ----------------------------------------------------------------------------------


def test_2_bad_spec(tmp_path, capsys):
    spec = _project(tmp_path)
    spec.write_text(spec.read_text().replace("relations:", "relatoins:"))
    code, _, err = _cli(capsys, "pull", str(spec))
    assert code == ExitCode.BAD_INPUT == 2
    assert "'relatoins'" in _one_line(err)


def test_2_output_over_an_input(tmp_path, capsys):
    spec = _project(tmp_path, bundle="people.csv")
    code, _, err = _cli(capsys, "run", str(spec))
    assert code == 2
    assert "output.bundle" in _one_line(err) and "source.vertex_files[0].path" in err
    assert (tmp_path / "people.csv").read_text() == PEOPLE


def test_2_an_output_that_cannot_be_written(tmp_path, capsys):
    spec = _project(tmp_path, report="out/" + "r" * 300 + ".json")  # name too long for the OS
    assert _cli(capsys, "pull", str(spec))[0] == 0
    code, _, err = _cli(capsys, "check", str(spec))
    assert code == 2
    line = _one_line(err)
    assert "output.report" in line and "cannot write" in line
    assert _leftovers(tmp_path) == []


def test_3_missing_input_file(tmp_path, capsys):
    spec = _project(tmp_path)
    (tmp_path / "people.csv").unlink()
    code, _, err = _cli(capsys, "pull", str(spec))
    assert code == ExitCode.SOURCE_UNREADABLE == 3
    assert "people.csv" in _one_line(err)


def test_8_missing_snapshot(tmp_path, capsys):
    spec = _project(tmp_path)
    for command in ("check", "build"):
        code, _, err = _cli(capsys, command, str(spec))
        assert code == ExitCode.BUNDLE_CORRUPT == 8
        assert "no snapshot here" in _one_line(err)


def test_8_damaged_bundle(tmp_path, capsys):
    spec = _project(tmp_path)
    assert _cli(capsys, "run", str(spec))[0] == 0
    table = tmp_path / "out/bundle/tables/vertices/person.parquet"
    data = bytearray(table.read_bytes())
    data[len(data) // 2] ^= 0x01
    table.write_bytes(bytes(data))
    code, out, _ = _cli(capsys, "inspect", str(tmp_path / "out/bundle"))
    assert code == 8
    assert "DAMAGED" in out and "altered or missing: tables/vertices/person.parquet" in out


# --- 4-7: real servers --------------------------------------------------------------------------


def _sparql_spec(root: Path, url: str, **source: object) -> Path:
    document = {
        "spec_version": 1,
        "source": {"kind": "sparql-endpoint", "query_url": url, **source},
        "rdf": {"prefixes": {"ex": "http://e.test/"}},
        "vertex_types": {
            "thing": {"match": "ex:Thing", "properties": {"size": {"from": "ex:size"}}}
        },
        "output": {"bundle": "out/bundle"},
    }
    root.mkdir(parents=True, exist_ok=True)
    (root / "spec.yaml").write_text(yaml.safe_dump(document))
    return root / "spec.yaml"


def _gremlin_spec(root: Path, url: str, match: str, **source: object) -> Path:
    document = {
        "spec_version": 1,
        "source": {"kind": "gremlin", "url": url, **source},
        "vertex_types": {"item": {"match": match, "properties": {"n": {}}}},
        "output": {"bundle": "out/bundle"},
    }
    root.mkdir(parents=True, exist_ok=True)
    (root / "spec.yaml").write_text(yaml.safe_dump(document))
    return root / "spec.yaml"


@pytest.mark.servers
def test_4_credentials_refused(tmp_path, capsys, monkeypatch, fuseki_auth_server):
    user, password = fuseki_auth_server.auth
    monkeypatch.setenv("GM_EC_USER", user)
    monkeypatch.setenv("GM_EC_PASSWORD", "not-" + password)
    spec = _sparql_spec(
        tmp_path,
        fuseki_auth_server.query_url,
        username_env="GM_EC_USER",
        password_env="GM_EC_PASSWORD",
    )
    code, _, err = _cli(capsys, "pull", str(spec))
    assert code == ExitCode.AUTH_REFUSED == 4
    line = _one_line(err)
    assert "HTTP 401" in line and password not in line


@pytest.fixture
def heavy_gremlin(gremlin_server):
    """30,000 vertices on the real Gremlin Server: enough that a 1 ms evaluation timeout hits
    (the same data as tests/connectors/gremlin/test_gremlin_faults.py's ``heavy``)."""
    sys.path.insert(0, str(GREMLIN_HELPERS))
    try:
        from gremlin_helpers import drop_labels, vertex, write_graph
    finally:
        sys.path.remove(str(GREMLIN_HELPERS))
    drop_labels(gremlin_server.url, ["ec_heavy"])
    items = [vertex(f"e{i:05d}", "ec_heavy", n=i) for i in range(30_000)]
    write_graph(gremlin_server.url, items, [])
    yield gremlin_server
    drop_labels(gremlin_server.url, ["ec_heavy"])


@pytest.mark.servers
def test_5_server_timeout(tmp_path, capsys, heavy_gremlin):
    spec = _gremlin_spec(
        tmp_path,
        heavy_gremlin.url,
        "ec_heavy",
        request_timeout_s=0.001,
        retries={"attempts": 2, "initial_wait_s": 0.01},
    )
    code, _, err = _cli(capsys, "pull", str(spec))
    assert code == ExitCode.SOURCE_TIMEOUT == 5
    assert "status 598" in _one_line(err)


@pytest.mark.servers
def test_6_server_error(tmp_path, capsys, gremlin_server):
    # the server has no traversal source of that name and answers with an error status
    spec = _gremlin_spec(
        tmp_path, gremlin_server.url, "person", traversal_source="g_no_such_source"
    )
    code, _, err = _cli(capsys, "pull", str(spec))
    assert code == ExitCode.SOURCE_SERVER_ERROR == 6, err
    line = _one_line(err)
    assert "answered with status" in line and gremlin_server.url in line


@pytest.mark.servers
def test_7_malformed_answer(tmp_path, capsys, oxigraph_server):
    # Oxigraph's root answers 200 with its HTML query page, not SPARQL results
    spec = _sparql_spec(tmp_path, f"{oxigraph_server.url}/", retries={"attempts": 1})
    code, _, err = _cli(capsys, "pull", str(spec))
    assert code == ExitCode.MALFORMED_RESPONSE == 7, err
    assert "content type 'text/html'" in _one_line(err)


# --- 9: an optional package that cannot be imported -------------------------------------------


def test_9_missing_optional_package(tmp_path, capsys, monkeypatch):
    (tmp_path / "g.nt").write_text(
        "<http://e.test/a> <http://www.w3.org/1999/02/22-rdf-syntax-ns#type> <http://e.test/T> .\n"
    )
    document = {
        "spec_version": 1,
        "source": {"kind": "rdf-file", "paths": ["g.nt"]},
        "rdf": {"prefixes": {"ex": "http://e.test/"}},
        "vertex_types": {"t": {"match": "ex:T"}},
        "output": {"bundle": "out/bundle"},
    }
    (tmp_path / "spec.yaml").write_text(yaml.safe_dump(document))
    for name in [m for m in sys.modules if m == "pyoxigraph" or m.startswith("pyoxigraph.")]:
        monkeypatch.delitem(sys.modules, name)
    monkeypatch.setitem(sys.modules, "pyoxigraph", None)  # `import pyoxigraph` now fails
    code, _, err = _cli(capsys, "pull", str(tmp_path / "spec.yaml"))
    assert code == ExitCode.MISSING_EXTRA == 9
    assert "pip install 'graphmill[rdf]'" in _one_line(err)
    assert not (tmp_path / "out").exists()


# --- 70 and 130: a third-party source, installed with an entry point ---------------------------

PLUGIN = """
import logging
import time
from pathlib import Path

from graphmill.connectors.base import GraphSource, Provenance


class BuggySource(GraphSource):
    kind = "ec-buggy"

    def read(self, unit, cursor=None):
        logging.getLogger("ec_plugin").warning("plugin noise")  # shown only with -v
        return iter([1 / 0])  # a bug in the plugin

    def provenance(self):
        return Provenance(self.kind, "nowhere")


class SlowSource(BuggySource):
    kind = "ec-slow"

    def read(self, unit, cursor=None):
        Path(self.spec.source["started"]).write_text("reading")
        time.sleep(60)
        return iter(())
"""


@pytest.fixture
def plugin_site(tmp_path, monkeypatch) -> Path:
    """A site folder holding a source plugin as pip would install it."""
    site = tmp_path / "site"
    info = site / "graphmill_ec_plugin-0.1.dist-info"
    info.mkdir(parents=True)
    (site / "graphmill_ec_plugin.py").write_text(PLUGIN)
    (info / "METADATA").write_text(
        "Metadata-Version: 2.1\nName: graphmill-ec-plugin\nVersion: 0.1\n"
    )
    (info / "entry_points.txt").write_text(
        "[graphmill.sources]\n"
        "ec-buggy = graphmill_ec_plugin:BuggySource\n"
        "ec-slow = graphmill_ec_plugin:SlowSource\n"
    )
    monkeypatch.syspath_prepend(str(site))
    return site


def _plugin_spec(root: Path, kind: str, **source: str) -> Path:
    document = {
        "spec_version": 1,
        "source": {"kind": kind, **source},
        "vertex_types": {"item": {}},
        "output": {"bundle": "out/bundle"},
    }
    (root / "spec.yaml").write_text(yaml.safe_dump(document))
    return root / "spec.yaml"


def test_70_internal_error(tmp_path, capsys, plugin_site):
    spec = _plugin_spec(tmp_path, "ec-buggy")
    code, _, err = _cli(capsys, "pull", str(spec))
    assert code == ExitCode.INTERNAL == 70
    line = _one_line(err)
    assert "internal error: ZeroDivisionError" in line and "Please report it" in line
    assert not (tmp_path / "out").exists()
    code, _, err = _cli(capsys, "pull", str(spec), "-v")  # -v: the noise and the traceback
    assert code == 70
    assert "WARNING: plugin noise" in err and "ZeroDivisionError: division by zero" in err


def test_130_interrupted(tmp_path, plugin_site):
    started = tmp_path / "started"
    spec = _plugin_spec(tmp_path, "ec-slow", started=str(started))
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(plugin_site), str(REPO)])}
    process = subprocess.Popen(
        [sys.executable, "-m", "graphmill.cli", "pull", str(spec), "--no-progress"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=env,
    )
    deadline = time.monotonic() + 60
    while not started.exists() and process.poll() is None and time.monotonic() < deadline:
        time.sleep(0.05)
    assert started.exists(), process.communicate(timeout=10)
    process.send_signal(signal.SIGINT)
    _, err = process.communicate(timeout=30)
    assert process.returncode == 130, err
    assert "interrupted; run the same command again to resume" in _one_line(err)


# --- the README's table -------------------------------------------------------------------------


def _readme_codes() -> dict[int, str]:
    text = (REPO / "README.md").read_text(encoding="utf-8")
    section = text.split("### Exit codes", 1)[1].split("\n\n", 2)[1]
    rows = re.findall(r"^\| (\d+) \| (.+) \|$", section, flags=re.M)
    return {int(code): meaning for code, meaning in rows}


def test_every_code_of_the_readme_table_is_pinned_here():
    codes = _readme_codes()
    pinned = {int(m.group(1)) for name in globals() if (m := re.match(r"test_(\d+)_", name))}
    assert set(codes) == pinned == {int(c) for c in ExitCode} | {130}
