"""End to end: RDF files -> graphmill.snapshot.pull -> the exact snapshot tables.

``people.trig`` (tests/data/rdf) holds three classes, multi-valued and mixed-kind properties,
a blank node, a subject with two declared classes, language tags and two named graphs.
"""

from __future__ import annotations

import datetime as dt
import gzip
import hashlib
import os
import random
import shutil
from pathlib import Path

import pyarrow as pa
import pyoxigraph as ox
import pytest
from rdfsource_helpers import EX, pull_snapshot, rdf_spec, table_hashes, tables

from graphmill.connectors import open_source
from graphmill.errors import InputError, SourceUnavailableError, SpecError

DATA = Path(__file__).resolve().parents[2] / "data" / "rdf" / "people.trig"
ALICE, BOB, CAROL, DAVE, ERIN = (EX + n for n in ("alice", "bob", "_", "dave", "erin"))
CAROL = "_:carol"
ACME, NOBODY = EX + "acme", EX + "nobody"
PERSON = {
    "match": "ex:Person",
    "properties": {
        "name": {"from": "ex:name", "multi": True},
        "age": {"from": "ex:age", "kind": "integer"},
        "nick": {"from": "ex:nick", "multi": True},
        "born": {"from": "ex:born"},
        "score": {"from": "ex:score", "multi": True},
    },
}
COMPANY = {
    "match": "ex:Company",
    "properties": {
        "name": {"from": "ex:name"},
        "founded": {"from": "ex:founded"},
        "public": {"from": "ex:public"},
    },
}
RELATIONS = [
    {"from": "Person", "name": "knows", "to": "Person", "match": "ex:knows"},
    {"from": "Person", "name": "works_for", "to": "Company", "match": "ex:worksFor"},
]


def people_spec(root: Path, kind: str, paths=("people.trig",), out=None, **rdf):
    if not (root / "people.trig").exists():
        shutil.copy(DATA, root / "people.trig")
    vertex_types = {"Person": PERSON, "Company": COMPANY}
    return rdf_spec(root, kind, list(paths), vertex_types, RELATIONS, out=out, **rdf)


def person(vid, name=None, age=None, nick=None, born=None, score=None):
    return {"vertex_id": vid, "name": name, "age": age, "nick": nick, "born": born, "score": score}


def test_exact_tables(tmp_path, kind):
    snap = pull_snapshot(people_spec(tmp_path, kind))
    born = dt.datetime(1990, 4, 1, 6, 30, tzinfo=dt.UTC)  # 08:30+02:00
    assert tables(snap) == {
        "Person": [
            person(CAROL, name=["Carol"]),  # "thirty"^^xsd:integer is ill-typed: null
            person(ALICE, ["Alice", "Alice", "Alicia"], 34, ["ali", "lissy"], born, ["7", "8.5"]),
            person(BOB, ["Bob"], 41, score=["high"]),  # "41"^^xsd:int = "041"^^xsd:integer
        ],
        "Company": [
            {
                "vertex_id": ACME,
                "name": "ACME Corp",
                "founded": dt.date(1999, 12, 31),
                "public": True,
            }
        ],
        "Person.knows.Person": [
            {"source_id": ALICE, "target_id": CAROL},
            {"source_id": ALICE, "target_id": BOB},
            {"source_id": BOB, "target_id": ALICE},
            {"source_id": BOB, "target_id": NOBODY},  # dangling: reported by the checks
        ],
        "Person.works_for.Company": [
            {"source_id": ALICE, "target_id": ACME},
            {"source_id": BOB, "target_id": ACME},
        ],
    }
    kinds = snap.value_kinds("vertices", "Person")
    assert kinds["age"] == {"ill-typed": 1, "integer": 2}
    assert kinds["score"] == {"float": 1, "integer": 1, "string": 1}
    assert kinds["name"] == {"string": 5}
    schema = snap.vertices("Person").schema
    assert str(schema.field("born").type) == "timestamp[us, tz=UTC]"
    assert schema.field("score").type.value_type == pa.string()


def test_several_types_every_type(tmp_path, kind):
    snap = pull_snapshot(people_spec(tmp_path, kind, several_types="every-type"))
    assert [r["vertex_id"] for r in snap.vertices("Person").to_pylist()] == [CAROL, ALICE, BOB]
    companies = snap.vertices("Company").to_pylist()
    assert companies == [
        {"vertex_id": ACME, "name": "ACME Corp", "founded": dt.date(1999, 12, 31), "public": True},
        {"vertex_id": BOB, "name": "Bob", "founded": None, "public": None},
    ]


def test_several_types_first_declared_follows_spec_order(tmp_path, kind):
    spec = people_spec(tmp_path, kind)
    raw = dict(spec.raw)
    raw["vertex_types"] = {"Company": COMPANY, "Person": PERSON}
    from graphmill.spec import spec_from_dict

    snap = pull_snapshot(spec_from_dict(raw, base_dir=tmp_path))
    assert [r["vertex_id"] for r in snap.vertices("Company").to_pylist()] == [ACME, BOB]
    assert BOB not in [r["vertex_id"] for r in snap.vertices("Person").to_pylist()]
    # bob is no Person now, so his edges are gone too
    assert [e["source_id"] for e in snap.edges(snap.relations[0]).to_pylist()] == [ALICE, ALICE]


def test_several_types_reject_names_the_subject(tmp_path, kind):
    spec = people_spec(tmp_path, kind, several_types="reject")
    with pytest.raises(InputError) as caught:
        pull_snapshot(spec)
    assert caught.value.record == BOB
    message = caught.value.one_line()
    assert f"record {BOB}" in message and "'Person' and 'Company'" in message
    assert not spec.output.snapshot.exists()


@pytest.mark.parametrize(
    ("languages", "alice", "bob", "carol"),
    [
        (["en", ""], ["Alice", "Alice"], ["Bob"], ["Carol"]),
        (["EN"], ["Alice"], None, ["Carol"]),  # tags compare ignoring case; "Carol"@EN too
        (["es"], ["Alicia"], None, None),
        ([""], ["Alice"], ["Bob"], None),
    ],
)
def test_language_filter(tmp_path, kind, languages, alice, bob, carol):
    snap = pull_snapshot(people_spec(tmp_path, kind, languages=languages))
    names = {r["vertex_id"]: r["name"] for r in snap.vertices("Person").to_pylist()}
    assert names == {ALICE: alice, BOB: bob, CAROL: carol}
    # other datatypes are not strings: the languages filter leaves them alone
    assert {r["vertex_id"]: r["age"] for r in snap.vertices("Person").to_pylist()}[ALICE] == 34


def test_union_of_graphs_with_graph_property(tmp_path, kind):
    spec = people_spec(tmp_path, kind, graphs="union", graph_property="graph")
    snap = pull_snapshot(spec)
    people = {r["vertex_id"]: r for r in snap.vertices("Person").to_pylist()}
    assert sorted(people) == sorted([CAROL, ALICE, BOB, DAVE, ERIN])
    graphs = {v: r["graph"] for v, r in people.items()}
    # alice is typed in the default graph and in ex:archive: the smallest ("") is kept
    assert graphs == {CAROL: "", ALICE: "", BOB: "", DAVE: EX + "hr", ERIN: EX + "archive"}
    assert people[DAVE]["name"] == ["Dave"] and people[ERIN]["age"] == 50
    # acme is public in the default graph and not in ex:hr: single-valued keeps the smallest
    assert snap.vertices("Company").to_pylist()[0]["public"] is False
    warnings = snap.document["warnings"]
    assert any(w.startswith("Person.graph: 1 vertices") for w in warnings)
    assert any(w.startswith("Company.public: 1 vertices") for w in warnings)
    assert {"source_id": DAVE, "target_id": ALICE} in snap.edges(snap.relations[0]).to_pylist()


def test_named_graph_list(tmp_path, kind):
    snap = pull_snapshot(people_spec(tmp_path, kind, graphs=["ex:hr"], graph_property="graph"))
    assert snap.vertices("Person").to_pylist() == [
        {**person(DAVE, ["Dave"], 29), "graph": EX + "hr"}
    ]
    assert snap.vertices("Company").num_rows == 0  # acme has no rdf:type inside ex:hr
    assert snap.edges(snap.relations[0]).to_pylist() == [{"source_id": DAVE, "target_id": ALICE}]


def test_graph_property_of_the_default_graph_is_empty_string(tmp_path, kind):
    snap = pull_snapshot(people_spec(tmp_path, kind, graph_property="graph"))
    assert {r["graph"] for r in snap.vertices("Person").to_pylist()} == {""}


CONFIGS = [
    {},
    {"graphs": "union", "graph_property": "graph"},
    {"graphs": ["ex:hr", "ex:archive"], "several_types": "every-type"},
    {"languages": ["en", ""], "several_types": "every-type", "graphs": "union"},
]


@pytest.mark.parametrize("config", CONFIGS)
def test_rdf_file_and_rdf_store_give_identical_bytes(tmp_path, config):
    hashes = [
        table_hashes(pull_snapshot(people_spec(tmp_path, k, out=k, **config)))
        for k in ("rdf-file", "rdf-store")
    ]
    assert hashes[0] == hashes[1]
    files = [
        sorted(p.read_bytes() for p in (tmp_path / k / "bundle.snapshot").rglob("*.parquet"))
        for k in ("rdf-file", "rdf-store")
    ]
    assert files[0] == files[1]


def _as_nquads(shuffle_seed: int | None) -> bytes:
    lines = ox.serialize(ox.parse(path=str(DATA)), format=ox.RdfFormat.N_QUADS).splitlines(True)
    if shuffle_seed is not None:
        random.Random(shuffle_seed).shuffle(lines)
    return b"".join(lines)


@pytest.mark.parametrize("config", CONFIGS[:2])
def test_shuffled_and_split_data_gives_identical_snapshots(tmp_path, kind, config):
    reference = table_hashes(pull_snapshot(people_spec(tmp_path, kind, out="ref", **config)))
    for seed in (1, 2):
        lines = _as_nquads(seed).splitlines(True)
        (tmp_path / f"a{seed}.nq").write_bytes(b"".join(lines[::2]))
        (tmp_path / f"b{seed}.nq").write_bytes(b"".join(lines[1::2]))
        spec = people_spec(tmp_path, kind, (f"b{seed}.nq", f"a{seed}.nq"), out=f"s{seed}", **config)
        assert table_hashes(pull_snapshot(spec)) == reference


def test_page_size_does_not_change_the_snapshot(tmp_path, kind):
    config = {"graphs": "union", "graph_property": "graph"}
    big = table_hashes(pull_snapshot(people_spec(tmp_path, kind, out="big", **config)))
    small = pull_snapshot(people_spec(tmp_path, kind, out="small", **config), page_rows=1)
    assert table_hashes(small) == big


@pytest.mark.parametrize(
    ("name", "serialize_as", "declared"),
    [
        ("people.ttl", "TURTLE", None),
        ("people.nt", "N_TRIPLES", None),
        ("people.rdf", "RDF_XML", None),
        ("people.owl", "RDF_XML", None),
        ("people.data", "N_TRIPLES", "n-triples"),
        ("people.nt.gz", "N_TRIPLES", None),
        ("people.trig.gz", "TRIG", None),
    ],
)
def test_every_format_reads_the_same_graph(tmp_path, kind, name, serialize_as, declared):
    reference = table_hashes(pull_snapshot(people_spec(tmp_path, kind, out="ref")))
    default_graph = ox.Store()
    default_graph.bulk_extend(
        q for q in ox.parse(path=str(DATA)) if q.graph_name == ox.DefaultGraph()
    )
    fmt = getattr(ox.RdfFormat, serialize_as)
    source = default_graph if serialize_as == "TRIG" else (q.triple for q in default_graph)
    data = ox.serialize(source, format=fmt)
    target = tmp_path / name
    target.write_bytes(gzip.compress(data, mtime=0) if name.endswith(".gz") else data)
    spec = people_spec(tmp_path, kind, (name,), out="other")
    if declared:
        raw = dict(spec.raw)
        raw["source"] = {**raw["source"], "format": declared}
        from graphmill.spec import spec_from_dict

        spec = spec_from_dict(raw, base_dir=tmp_path)
    assert table_hashes(pull_snapshot(spec)) == reference


def test_provenance(tmp_path, kind):
    snap = pull_snapshot(people_spec(tmp_path, kind))
    source = snap.provenance
    assert source["kind"] == kind and source["location"] == "people.trig"
    (entry,) = source["details"]["files"]
    assert entry == {
        "path": "people.trig",
        "format": "trig",
        "bytes": DATA.stat().st_size,
        "sha256": hashlib.sha256(DATA.read_bytes()).hexdigest(),
    }
    if kind == "rdf-store":
        assert len(source["queries"]) == 2 + 5 + 3 + 2  # memberships, facets, relations
        assert all(q.startswith("SELECT") for q in source["queries"])
    else:
        assert source["queries"] == []


def test_anonymous_blank_nodes_become_vertices(tmp_path, kind):
    (tmp_path / "anon.ttl").write_text(
        f'@prefix ex: <{EX}> .\nex:zed a ex:Person ; ex:knows [ a ex:Person ; ex:name "Anon" ] .\n',
        encoding="utf-8",
    )
    snap = pull_snapshot(people_spec(tmp_path, kind, ("anon.ttl",)))
    people = snap.vertices("Person").to_pylist()
    (anon,) = [p for p in people if p["vertex_id"].startswith("_:")]
    assert anon["name"] == ["Anon"]
    assert snap.edges(snap.relations[0]).to_pylist() == [
        {"source_id": EX + "zed", "target_id": anon["vertex_id"]}
    ]


# --------------------------------------------------------------------------- bad input


def test_missing_file(tmp_path, kind):
    with pytest.raises(SourceUnavailableError) as caught:
        pull_snapshot(people_spec(tmp_path, kind, ("nowhere.ttl",)))
    assert caught.value.one_line().startswith("nowhere.ttl: no such file")


def test_folder_instead_of_file(tmp_path, kind):
    (tmp_path / "dump.nt").mkdir()
    with pytest.raises(SourceUnavailableError) as caught:
        pull_snapshot(people_spec(tmp_path, kind, ("dump.nt",)))
    assert "folder" in caught.value.one_line() and caught.value.file == "dump.nt"


@pytest.mark.skipif(os.geteuid() == 0, reason="root reads files whatever their mode")
def test_unreadable_file(tmp_path, kind):
    path = tmp_path / "secret.nt"
    path.write_text("", encoding="utf-8")
    path.chmod(0)
    with pytest.raises(SourceUnavailableError) as caught:
        pull_snapshot(people_spec(tmp_path, kind, ("secret.nt",)))
    assert caught.value.file == "secret.nt" and "permission denied" in caught.value.one_line()


def test_malformed_turtle_names_the_line(tmp_path, kind):
    text = f"@prefix ex: <{EX}> .\nex:a a ex:Person .\nex:b a ex:Person ;\n  ex:name .\n"
    (tmp_path / "bad.ttl").write_text(text, encoding="utf-8")
    spec = people_spec(tmp_path, kind, ("bad.ttl",))
    with pytest.raises(InputError) as caught:
        pull_snapshot(spec)
    assert caught.value.one_line().startswith("bad.ttl:4: not valid turtle (column")
    assert caught.value.one_line().endswith("Fix the line or remove it.")
    assert not spec.output.snapshot.exists()


def test_broken_gzip(tmp_path, kind):
    (tmp_path / "dump.nt.gz").write_bytes(
        gzip.compress(b"<http://a/s> <http://a/p> <http://a/o> .\n")[:-12]
    )
    with pytest.raises(InputError) as caught:
        pull_snapshot(people_spec(tmp_path, kind, ("dump.nt.gz",)))
    assert caught.value.file == "dump.nt.gz"


def test_unknown_extension(tmp_path, kind):
    (tmp_path / "dump.json").write_text("{}", encoding="utf-8")
    with pytest.raises(SpecError) as caught:
        open_source(people_spec(tmp_path, kind, ("dump.json",))).open()
    assert caught.value.key_path == "source.paths[0]"


def test_relation_properties_are_refused(tmp_path, kind):
    shutil.copy(DATA, tmp_path / "people.trig")
    relation = {**RELATIONS[0], "properties": {"since": {"from": "ex:since"}}}
    with pytest.raises(SpecError) as caught:  # refused when the spec is loaded
        open_source(rdf_spec(tmp_path, kind, ["people.trig"], {"Person": PERSON}, [relation]))
    assert caught.value.key_path == "relations[0].properties"


def test_graph_property_may_not_shadow_a_property(tmp_path, kind):
    with pytest.raises(SpecError) as caught:
        open_source(people_spec(tmp_path, kind, graph_property="age"))
    assert caught.value.key_path == "rdf.graph_property"
