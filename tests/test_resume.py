"""Honest resumes: a pull stopped partway, its input changed, then resumed, publishes the NEW
data and says which unit restarted and why; unchanged input resumes; ``fresh`` starts over.
Table files and RDF dumps here; a live Gremlin Server in
tests/connectors/gremlin/test_gremlin_faults.py."""

from __future__ import annotations

import hashlib
import json
import os

import pytest
import yaml

from graphmill.cli import main
from graphmill.connectors import open_source
from graphmill.snapshot import Snapshot, pull
from graphmill.spec import spec_from_dict
from tests.interruptions import StopAfter

PEOPLE = "id,age\np1,30\np2,41\n"
KNOWS = "a,b\np1,p2\n"
EX = "http://example.org/"
TRIPLES = (
    f"<{EX}p1> <http://www.w3.org/1999/02/22-rdf-syntax-ns#type> <{EX}Person> .\n"
    f"<{EX}p2> <http://www.w3.org/1999/02/22-rdf-syntax-ns#type> <{EX}Person> .\n"
    f'<{EX}p1> <{EX}age> "30"^^<http://www.w3.org/2001/XMLSchema#integer> .\n'
    f"<{EX}p1> <{EX}knows> <{EX}p2> .\n"
)


def table_document(root):
    return {
        "spec_version": 1,
        "source": {
            "kind": "table-files",
            "vertex_files": [{"path": "people.csv", "id_column": "id", "type": "person"}],
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
        "output": {"bundle": str(root / "out" / "bundle")},
    }


def rdf_document(root, kind):
    return {
        "spec_version": 1,
        "source": {"kind": kind, "paths": ["graph.nt"]},
        "rdf": {"prefixes": {"ex": EX}},
        "vertex_types": {
            "person": {"match": "ex:Person", "properties": {"age": {"from": "ex:age"}}}
        },
        "relations": [{"from": "person", "name": "knows", "to": "person", "match": "ex:knows"}],
        "output": {"bundle": str(root / "out" / "bundle")},
    }


@pytest.fixture
def tables(tmp_path):
    (tmp_path / "people.csv").write_text(PEOPLE)
    (tmp_path / "knows.csv").write_text(KNOWS)
    return spec_from_dict(table_document(tmp_path), base_dir=tmp_path)


def _stop_partway(spec, pages=2):
    """Stage the first unit whole and one page of the second, then stop."""
    with pytest.raises(StopAfter.StopError):
        pull(spec, open_source(spec), progress=StopAfter(pages))
    assert not spec.output.snapshot.exists()


def _ages(spec):
    rows = Snapshot.open(spec.output.snapshot).vertices("person").to_pylist()
    return {r["vertex_id"]: r["age"] for r in rows}


def test_changed_table_file_restarts_its_unit_and_publishes_the_new_rows(tables, tmp_path):
    _stop_partway(tables)
    (tmp_path / "people.csv").write_text(PEOPLE.replace("p2,41", "p2,42").replace("30", "31"))
    info = pull(tables, open_source(tables))
    assert _ages(tables) == {"p1": 31, "p2": 42}  # the new rows, not the staged ones
    assert info.restarted == ["vertices.person.p000of001"]
    note = info.warnings[0]
    assert "vertices.person.p000of001" in note and "people.csv" in note
    assert "same size, different sha256" in note


def test_a_grown_file_is_named_with_its_sizes(tables, tmp_path):
    _stop_partway(tables)
    (tmp_path / "people.csv").write_text(PEOPLE + "p3,7\n")
    info = pull(tables, open_source(tables))
    assert _ages(tables) == {"p1": 30, "p2": 41, "p3": 7}
    size = len(PEOPLE)
    assert f"size {size} -> {size + 5} bytes" in info.warnings[0]


def test_touched_but_unchanged_file_is_resumed(tables, tmp_path):
    _stop_partway(tables)
    path = tmp_path / "people.csv"
    os.utime(path, ns=(path.stat().st_atime_ns, path.stat().st_mtime_ns + 5_000_000_000))
    info = pull(tables, open_source(tables))
    assert info.restarted == [] and info.units_resumed == 1
    assert _ages(tables) == {"p1": 30, "p2": 41}


def test_fresh_pull_reads_every_unit_again(tables, tmp_path):
    _stop_partway(tables)
    info = pull(tables, open_source(tables), fresh=True)
    assert info.units_resumed == 0 and info.restarted == []


def test_snapshot_records_the_input_fingerprints(tables, tmp_path):
    pull(tables, open_source(tables))
    inputs = Snapshot.open(tables.output.snapshot).provenance["inputs"]
    people = inputs["vertices.person.p000of001"]["files"]
    # the reference: hashlib over the bytes written above
    assert people == [
        {
            "path": "people.csv",
            "size": len(PEOPLE),
            "sha256": hashlib.sha256(PEOPLE.encode()).hexdigest(),
        }
    ]
    assert inputs["edges.person.knows.person.p000of001"]["files"][0]["path"] == "knows.csv"


@pytest.mark.parametrize("kind", ["rdf-file", "rdf-store"])
def test_changed_rdf_dump_restarts_the_staged_units(tmp_path, kind):
    (tmp_path / "graph.nt").write_text(TRIPLES)
    spec = spec_from_dict(rdf_document(tmp_path, kind), base_dir=tmp_path)
    _stop_partway(spec)
    (tmp_path / "graph.nt").write_text(TRIPLES.replace('"30"', '"31"'))
    info = pull(spec, open_source(spec))
    assert _ages(spec) == {f"{EX}p1": 31, f"{EX}p2": None}
    assert info.restarted  # the units staged before the stop
    assert all("graph.nt" in w for w in info.warnings[: len(info.restarted)])


@pytest.mark.parametrize("command", ["pull", "run"])
def test_fresh_flag_on_the_command_line(tmp_path, command, capsys):
    (tmp_path / "people.csv").write_text(PEOPLE)
    (tmp_path / "knows.csv").write_text(KNOWS)
    document = table_document(tmp_path)
    path = tmp_path / "spec.yaml"
    path.write_text(yaml.safe_dump(document))
    _stop_partway(spec_from_dict(document, base_dir=tmp_path))
    main([command, str(path), "--fresh", "--json"])
    out = json.loads(capsys.readouterr().out)
    pulled = out if command == "pull" else out["pull"]
    assert pulled["units_resumed"] == 0 and pulled["restarted"] == []


@pytest.mark.servers
def test_changed_sparql_endpoint_restarts_the_staged_units(tmp_path):
    from servers.manage import OxigraphServer
    from servers.pytest_fixtures import started

    (tmp_path / "graph.nt").write_text(TRIPLES)
    with started(OxigraphServer(preload=[tmp_path / "graph.nt"])) as server:
        document = rdf_document(tmp_path, "sparql-endpoint")
        document["source"] = {"kind": "sparql-endpoint", "query_url": server.query_url}
        spec = spec_from_dict(document, base_dir=tmp_path)
        with pytest.raises(StopAfter.StopError):
            pull(spec, open_source(spec), progress=StopAfter(2))
        server.load(f"<{EX}p3> <http://www.w3.org/1999/02/22-rdf-syntax-ns#type> <{EX}Person> .\n")
        info = pull(spec, open_source(spec))
    assert _ages(spec) == {f"{EX}p1": 30, f"{EX}p2": None, f"{EX}p3": None}
    assert "vertices.person.p000of001" in info.restarted
    assert any("count 2 -> 3" in w for w in info.warnings)
