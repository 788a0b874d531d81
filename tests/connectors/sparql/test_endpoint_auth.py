"""HTTP basic authentication against Fuseki: credentials only from the environment, never in
the snapshot, its provenance, the staging folder, or what the command prints."""

from __future__ import annotations

import pytest
from sparql_helpers import endpoint, small_spec_doc, write_spec

from graphmill.cli import main
from graphmill.errors import AuthenticationError
from graphmill.snapshot import Snapshot

pytestmark = pytest.mark.servers


GRAPH = "http://e.test/auth-test-graph"  # a graph of its own on the shared server


@pytest.fixture(scope="module")
def auth_server(fuseki_auth_server):
    """The shared authenticating Fuseki with three things in this module's named graph."""
    things = "".join(
        f"<http://e.test/t{i}> <http://www.w3.org/1999/02/22-rdf-syntax-ns#type> "
        f'<http://e.test/Thing> .\n<http://e.test/t{i}> <http://e.test/label> "t{i}" .\n'
        for i in range(3)
    )
    fuseki_auth_server.load(things, graph=GRAPH)
    return fuseki_auth_server


def _run(tmp_path, server, capsys, monkeypatch, password, command="pull"):
    user, _ = server.auth
    monkeypatch.setenv("GM_SPARQL_USER", user)
    if password is None:
        monkeypatch.delenv("GM_SPARQL_PASSWORD", raising=False)
    else:
        monkeypatch.setenv("GM_SPARQL_PASSWORD", password)
    source = endpoint(
        server.query_url,
        username_env="GM_SPARQL_USER",
        password_env="GM_SPARQL_PASSWORD",
        retries={"attempts": 3},
    )
    doc = small_spec_doc(source, tmp_path, graphs=[GRAPH])
    spec = write_spec(tmp_path / "spec.yaml", doc)
    extra = ["--even-if-failing"] if command == "run" else []
    code = main([command, str(spec), "--no-progress", "-v", *extra])
    captured = capsys.readouterr()
    return code, captured.out + captured.err


def test_the_right_password_works_and_is_written_nowhere(
    tmp_path, auth_server, capsys, monkeypatch
):
    _, password = auth_server.auth
    code, output = _run(tmp_path, auth_server, capsys, monkeypatch, password, command="run")
    assert code in (0, 1), output  # 1: a check failed; the bundle is built all the same
    assert password not in output
    assert (tmp_path / "bundle" / "manifest.json").exists()
    assert Snapshot.open(tmp_path / "snapshot").vertices("thing").num_rows == 3
    for path in tmp_path.rglob("*"):
        if path.is_file() and path.name != "spec.yaml":
            assert password.encode() not in path.read_bytes(), path
    provenance = Snapshot.open(tmp_path / "snapshot").provenance
    assert provenance["kind"] == "sparql-endpoint"
    assert provenance["location"] == auth_server.query_url
    assert provenance["details"]["basic_auth"] is True and provenance["queries"]


@pytest.mark.parametrize("password", ["not-the-password", None], ids=["wrong", "unset"])
def test_a_refused_password_is_exit_4(tmp_path, auth_server, capsys, monkeypatch, password):
    code, output = _run(tmp_path, auth_server, capsys, monkeypatch, password)
    assert code == AuthenticationError.exit_code == 4
    # -v adds INFO lines (what each stage does); the error itself is one line
    lines = [line for line in output.splitlines() if line.strip() and ": INFO: " not in line]
    assert len(lines) == 1 and "Traceback" not in output
    assert ("GM_SPARQL_PASSWORD is not set" if password is None else "HTTP 401") in lines[0]
    assert auth_server.auth[1] not in output
    if password:
        assert password not in output and auth_server.query_url in lines[0]
    assert not (tmp_path / "snapshot").exists()
