"""Published graphs written as RDF and pulled back: the counts and structure must match.

* networkx.karate_club_graph (Zachary 1977): 34 vertices, 78 edges, each member in one of two
  clubs -- computed by networkx, not by us.
* TinkerPop's "modern" sample graph: 6 vertices, 6 edges (TinkerPop reference documentation);
  names, ages and languages below are from memory of that documentation.
"""

from __future__ import annotations

import networkx as nx
from rdfsource_helpers import EX, pull_snapshot, rdf_spec


def test_karate_club_round_trip(tmp_path, kind):
    graph = nx.karate_club_graph()
    assert (graph.number_of_nodes(), graph.number_of_edges()) == (34, 78)
    rdf_type = "<http://www.w3.org/1999/02/22-rdf-syntax-ns#type>"
    lines = [
        f'<{EX}m{n}> {rdf_type} <{EX}Member> .\n<{EX}m{n}> <{EX}club> "{c}" .\n'
        for n, c in graph.nodes(data="club")
    ]
    lines += [f"<{EX}m{u}> <{EX}knows> <{EX}m{v}> .\n" for u, v in graph.edges()]
    (tmp_path / "karate.nt").write_text("".join(lines), encoding="utf-8")
    member = {"match": "ex:Member", "properties": {"club": {"from": "ex:club"}}}
    knows = {"from": "member", "name": "knows", "to": "member", "match": "ex:knows"}
    spec = rdf_spec(
        tmp_path, kind, ["karate.nt"], {"member": member}, [{**knows, "undirected": True}]
    )
    snap = pull_snapshot(spec)
    members = snap.vertices("member").to_pylist()
    edges = snap.edges(snap.relations[0]).to_pylist()
    assert (len(members), len(edges)) == (34, 78)
    number = {f"{EX}m{n}": n for n in graph}
    assert {number[m["vertex_id"]]: m["club"] for m in members} == dict(graph.nodes(data="club"))
    pulled = nx.Graph((number[e["source_id"]], number[e["target_id"]]) for e in edges)
    assert nx.utils.edges_equal(pulled.edges(), graph.edges())
    assert dict(pulled.degree()) == dict(graph.degree())


MODERN = f"""@prefix ex: <{EX}> .
ex:marko a ex:person ; ex:name "marko" ; ex:age 29 ;
    ex:knows ex:vadas, ex:josh ; ex:created ex:lop .
ex:vadas a ex:person ; ex:name "vadas" ; ex:age 27 .
ex:lop a ex:software ; ex:name "lop" ; ex:lang "java" .
ex:josh a ex:person ; ex:name "josh" ; ex:age 32 ; ex:created ex:ripple, ex:lop .
ex:ripple a ex:software ; ex:name "ripple" ; ex:lang "java" .
ex:peter a ex:person ; ex:name "peter" ; ex:age 35 ; ex:created ex:lop .
"""


def test_tinkerpop_modern(tmp_path, kind):
    (tmp_path / "modern.ttl").write_text(MODERN, encoding="utf-8")
    named = {"name": {"from": "ex:name"}}
    types = {
        "person": {"match": "ex:person", "properties": {**named, "age": {"from": "ex:age"}}},
        "software": {"match": "ex:software", "properties": {**named, "lang": {"from": "ex:lang"}}},
    }
    relations = [
        {"from": "person", "name": "knows", "to": "person", "match": "ex:knows"},
        {"from": "person", "name": "created", "to": "software", "match": "ex:created"},
    ]
    spec = rdf_spec(tmp_path, kind, ["modern.ttl"], types, relations)
    snap = pull_snapshot(spec)
    people = snap.vertices("person").to_pylist()
    software = snap.vertices("software").to_pylist()
    assert len(people) + len(software) == 6
    edges = sum(snap.edges(r).num_rows for r in snap.relations)
    assert edges == 6
    assert {p["name"]: p["age"] for p in people} == {
        "marko": 29,
        "vadas": 27,
        "josh": 32,
        "peter": 35,
    }
    assert {s["name"]: s["lang"] for s in software} == {"lop": "java", "ripple": "java"}
    created = snap.edges(snap.relations[1]).to_pylist()
    assert sorted(e["target_id"] for e in created) == [EX + "lop"] * 3 + [EX + "ripple"]
