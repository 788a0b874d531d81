"""W3C-style N-Triples cases (tests/data/rdf/ntriples): good ones parse and map, bad ones fail.

Good cases are also parsed by rdflib, an independent N-Triples parser, and the snapshot must
hold exactly rdflib's literal values (as properties) and node objects (as edges).
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pyoxigraph as ox
import pytest
import rdflib
from rdfsource_helpers import pull_snapshot, rdf_spec

from graphmill.errors import InputError

CASES = Path(__file__).resolve().parents[2] / "data" / "rdf" / "ntriples"
MANIFEST = json.loads((CASES / "manifest.json").read_text(encoding="utf-8"))
NODE = "urn:graphmill-test:Node"
RDF_TYPE = "<http://www.w3.org/1999/02/22-rdf-syntax-ns#type>"


def _typing_file(case: Path, target: Path) -> None:
    """Give every subject of ``case`` the class NODE (labels as written, as graphmill keeps)."""
    subjects = {q.subject for q in ox.parse(path=str(case), format=ox.RdfFormat.N_TRIPLES)}
    lines = [f"{s} {RDF_TYPE} <{NODE}> .\n" for s in sorted(map(str, subjects))]
    target.write_text("".join(lines), encoding="utf-8")


def _expected_value(obj: rdflib.Literal) -> object:
    return obj.toPython() if obj.datatype and str(obj.datatype).endswith("#byte") else str(obj)


@pytest.mark.parametrize("name", MANIFEST["good"])
def test_good_case_maps_like_rdflib_reads_it(tmp_path, kind, name):
    case = tmp_path / f"{name}.nt"
    shutil.copy(CASES / case.name, case)
    _typing_file(case, tmp_path / "typing.nt")
    graph = rdflib.Graph()
    try:
        graph.parse(case, format="nt")
    except rdflib.exceptions.ParserError:
        # rdflib's N-Triples reader wants spaces between terms; N-Triples is Turtle too.
        graph.parse(case, format="turtle")
    predicates = sorted({str(p) for _, p, _ in graph})
    props = {f"p{i}": {"from": f"<{p}>", "multi": True} for i, p in enumerate(predicates)}
    relations = [
        {"from": "node", "name": f"r{i}", "to": "node", "match": f"<{p}>"}
        for i, p in enumerate(predicates)
    ]
    node = {"node": {"match": f"<{NODE}>", "properties": props}}
    spec = rdf_spec(tmp_path, kind, [case.name, "typing.nt"], node, relations)
    snap = pull_snapshot(spec)
    rows = {r["vertex_id"]: r for r in snap.vertices("node").to_pylist()}
    iri_subjects = {str(s) for s, _, _ in graph if isinstance(s, rdflib.URIRef)}
    assert {v for v in rows if not v.startswith("_:")} == iri_subjects
    assert len(rows) == len({s for s, _, _ in graph})
    for i, p in enumerate(predicates):
        facts = [(s, o) for s, pp, o in graph if str(pp) == p]
        literals = sorted(
            (str(s), _expected_value(o))
            for s, o in facts
            if isinstance(o, rdflib.Literal) and isinstance(s, rdflib.URIRef)
        )
        got = sorted(
            (v, x) for v, r in rows.items() if not v.startswith("_:") for x in (r[f"p{i}"] or [])
        )
        assert got == literals
        edges = snap.edges(snap.relations[i]).to_pylist()
        assert len(edges) == sum(1 for _, o in facts if not isinstance(o, rdflib.Literal))
        assert sorted(
            (e["source_id"], e["target_id"])
            for e in edges
            if not e["source_id"].startswith("_:") and not e["target_id"].startswith("_:")
        ) == sorted(
            (str(s), str(o))
            for s, o in facts
            if isinstance(o, rdflib.URIRef) and isinstance(s, rdflib.URIRef)
        )


@pytest.mark.parametrize(("name", "line"), sorted(MANIFEST["bad"].items()))
def test_bad_case_names_file_and_line(tmp_path, kind, name, line):
    case = tmp_path / f"{name}.nt"
    shutil.copy(CASES / case.name, case)
    spec = rdf_spec(tmp_path, kind, [case.name], {"node": {"match": f"<{NODE}>"}})
    with pytest.raises(InputError) as caught:
        pull_snapshot(spec)
    error = caught.value
    assert (error.file, error.line) == (case.name, line)
    message = error.one_line()
    assert message.startswith(f"{case.name}:{line}: not valid n-triples")
    assert message.endswith(". Fix the line or remove it.") and "\n" not in message
    assert not spec.output.snapshot.exists()  # nothing half-written
