"""Every RDF source reads one generated graph to the same snapshot bytes.

The graph (:func:`feature_nquads`, N-Quads, deterministic) holds every RDF feature the
mapping handles (``graphmill/connectors/rdf/__init__.py``, ``_xsd.py``):

* typed literals of every XSD datatype with a typed reading: xsd:integer and all twelve
  derived integer types, xsd:decimal, xsd:double and xsd:float (with INF, -INF and NaN),
  xsd:boolean (``true false 1 0``), xsd:dateTime (with and without an offset, fractional
  seconds), xsd:dateTimeStamp, xsd:date (with an offset); xsd:string, plain literals, and
  datatypes read as their lexical form (xsd:gYear, xsd:time, xsd:anyURI, a non-XSD IRI);
* language-tagged strings (``en``, ``en-GB``, ``de``, ``fr``), kept or dropped by
  ``rdf.languages``;
* ill-typed literals (``"abc"^^xsd:integer``, an integer beyond int64): null, text kept;
* strings with quotes, tab, newline, backslash, non-ASCII and astral characters;
* a property declared with a kind, one left to the data with integer + float (float64) and
  one mixing kinds (strings), and multi-valued properties with repeated values, equal as
  values (``"7"`` and ``"7"^^xsd:int``) or not;
* subjects with several declared classes (``every-type``), subjects with an undeclared
  class only, subjects with no type;
* relations between two types and within one, edges to nodes that are no vertex, literal
  objects of a relation predicate (ignored);
* IRIs with non-ASCII characters (``café``, ``漢字``, an emoji) and percent-escapes;
* the default graph and two named graphs (``graphs: union`` with ``graph_property``, a list
  of named graphs, and the default graph alone), a triple held in two graphs;
* blank nodes: as typed subjects (the ``anon`` type) and as objects of an unmapped predicate.
  A server labels blank nodes its own way (RDF 1.1 Concepts 3.4: labels are local to a
  document), so ``anon`` is compared without its IDs.

Sources: ``rdf-file``, ``rdf-store`` in memory and on disk (``source.store_folder``), and
``sparql-endpoint`` against Oxigraph server and Fuseki (whose default graph is a graph of
its own, as N-Quads has it; Virtuoso's is the union of all graphs, so it is left out here
and checked on its own graph in ``test_virtuoso_cap.py``), each endpoint with ``auto`` paging
and with key-range slices, in pages mapped in several slices. Fuseki answers a list of
named graphs graph by graph, so a subject's values come apart, on separate pages: equal
values among them are kept once all the same (the snapshot drops repeats per unit).
"""

from __future__ import annotations

import random
from pathlib import Path
from typing import Any

import pyarrow.compute as pc
import pytest
from sparql_helpers import endpoint, pull_spec

from graphmill.snapshot import Snapshot
from servers.manage import N_QUADS, FusekiServer, OxigraphServer
from servers.pytest_fixtures import started

pytestmark = pytest.mark.servers
EX = "http://f.test/"
X = "http://www.w3.org/2001/XMLSchema#"
TYPE = "<http://www.w3.org/1999/02/22-rdf-syntax-ns#type>"
GRAPHS = ["", f" <{EX}g/one>", f" <{EX}g/zwei\u00e9>"]
# (datatype, lexical forms): every form is in the datatype's lexical space unless marked
TYPED = {
    "integer": ["-42", "+7", "0", "9223372036854775807"],
    "long": ["12"], "int": ["7"], "short": ["-3"], "byte": ["5"],
    "nonNegativeInteger": ["0"], "positiveInteger": ["9"], "nonPositiveInteger": ["-1"],
    "negativeInteger": ["-8"], "unsignedLong": ["18"], "unsignedInt": ["4"],
    "unsignedShort": ["6"], "unsignedByte": ["255"],
    "decimal": ["-1.50", "2.25", "1000"],
    "double": ["1.5E2", "-0.25", "INF", "-INF", "NaN"],
    "float": ["1.1", "3.5E1"],
    "boolean": ["true", "false", "1", "0"],
    "dateTime": ["2002-10-10T12:00:00Z", "2002-10-10T12:00:00-05:00", "2020-01-01T00:00:00.5Z",
                 "2021-06-01T08:30:00"],
    "dateTimeStamp": ["2020-02-29T23:59:59+01:00"],
    "date": ["2004-04-12", "1999-12-31"],
    "string": ["plain typed"],
    "gYear": ["2020"], "time": ["10:00:00"], "anyURI": ["http://f.test/any"],
}  # fmt: skip
ILL_TYPED = [f'"abc"^^<{X}integer>', f'"99999999999999999999"^^<{X}integer>']
STRINGS = ['say "hi"', "tab\there", "new\nline", "back\\slash", "caf\u00e9 \u6f22\u5b57 \U0001f600"]
LANGS = ["en", "en-GB", "de", "fr"]
NAMES = ["caf\u00e9", "\u6f22\u5b57", "smile\U0001f600", "a%20b", "plain"]


def _escape(text: str) -> str:
    return text.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n").replace("\t", "\\t")


def _literal(rng: random.Random) -> str:
    roll = rng.random()
    if roll < 0.55:
        datatype = rng.choice(sorted(TYPED))
        return f'"{rng.choice(TYPED[datatype])}"^^<{X}{datatype}>'
    if roll < 0.75:
        return f'"{_escape(rng.choice(STRINGS))}"@{rng.choice(LANGS)}'
    if roll < 0.85:
        return f'"{_escape(rng.choice(STRINGS))}"'
    if roll < 0.9:
        return rng.choice(ILL_TYPED)
    return f'"v{rng.randint(0, 3)}"^^<{EX}custom>'  # a datatype XSD does not name


def feature_nquads(seed: int = 11, subjects: int = 150) -> str:
    """The generated graph as N-Quads (module doc); the same seed gives the same text."""
    rng = random.Random(seed)
    nodes = [f"<{EX}n/{rng.choice(NAMES)}{i}>" for i in range(subjects)]
    lines: list[tuple[str, str]] = []  # (triple, graph)

    def add(triple: str) -> None:
        for graph in rng.sample(GRAPHS, rng.choice([1, 1, 1, 2])):
            lines.append((triple, graph))

    for i, node in enumerate(nodes):
        classes = rng.sample(["A", "B", "Other"], rng.choice([0, 1, 1, 1, 2]))
        for cls in classes:
            add(f"{node} {TYPE} <{EX}{cls}>")
        for _ in range(rng.randint(1, 5)):
            add(f"{node} <{EX}any> {_literal(rng)}")  # mixed kinds, multi-valued
        add(f'{node} <{EX}count> "{i % 9}"^^<{X}integer>')
        if i % 4 == 0:  # the same value written twice: equal as values
            add(f'{node} <{EX}count> "{i % 9}"^^<{X}int>')
        numeric = f'"{i / 4}"^^<{X}decimal>' if i % 3 else f'"{i}"^^<{X}integer>'
        add(f"{node} <{EX}num> {numeric}")  # integer + float in one property
        add(f'{node} <{EX}title> "{_escape(rng.choice(STRINGS))} {i}"@{rng.choice(LANGS)}')
        for _ in range(rng.randint(0, 3)):
            target = rng.choice([*nodes, f"<{EX}nowhere/\u00fc{i}>"])
            add(f"{node} <{EX}links> {target}")
        if i % 10 == 0:
            add(f'{node} <{EX}links> "not a node"')
            add(f"{node} <{EX}address> _:addr{i}")
            add(f'_:addr{i} <{EX}city> "City {i % 7}"')
    for k in range(12):  # in every graph: each configuration reads them (once)
        for graph in GRAPHS:
            lines.append((f"_:anon{k} {TYPE} <{EX}Anon>", graph))
            lines.append((f'_:anon{k} <{EX}city> "Town {k}"', graph))
    rng.shuffle(lines)
    return "".join(f"{triple}{graph} .\n" for triple, graph in lines)


CONFIGS = {
    "union": {"graphs": "union", "graph_property": "graph", "several_types": "every-type"},
    "named": {"graphs": [f"{EX}g/zwei\u00e9", f"{EX}g/one"], "languages": ["en", ""]},
    "default": {"languages": ["en-gb", "DE"]},
}


def _doc(source: dict[str, Any], out: Path, rdf: dict[str, Any]) -> dict[str, Any]:
    props = {
        "any": {"from": "ex:any", "multi": True},
        "count": {"from": "ex:count", "kind": "integer", "multi": True},
        "num": {"from": "ex:num"},
        "title": {"from": "ex:title"},
    }
    return {
        "spec_version": 1,
        "name": "features",
        "source": source,
        "rdf": {"prefixes": {"ex": EX}, **rdf},
        "vertex_types": {
            "A": {"match": "ex:A", "properties": props},
            "B": {"match": "ex:B", "properties": {"title": {"from": "ex:title"}}},
            "anon": {"match": "ex:Anon", "properties": {"city": {"from": "ex:city"}}},
        },
        "relations": [
            {"from": "A", "name": "links", "to": "B", "match": "ex:links"},
            {"from": "B", "name": "links", "to": "B", "match": "ex:links"},
        ],
        "output": {"bundle": str(out / "bundle"), "snapshot": str(out / "snapshot")},
    }


def _compared(root: Path) -> dict[str, Any]:
    """Every table file's bytes but ``anon``'s; ``anon`` as its sorted values (module doc)."""
    snap = Snapshot.open(root)
    files = {
        f"{t['kind']}/{t['name']}": t["sha256"]
        for t in snap.document["tables"]
        if (t["kind"], t["name"]) != ("vertices", "anon")
    }
    anon = snap.vertices("anon")
    files["anon cities"] = sorted(map(repr, anon.column("city").to_pylist()))
    files["anon ids are blank"] = bool(pc.all(pc.starts_with(anon["vertex_id"], "_:")).as_py())
    files["value kinds"] = {vt: snap.value_kinds("vertices", vt) for vt in ("A", "B")}
    return files


@pytest.fixture(scope="module")
def dump(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("features") / "features.nq"
    path.write_text(feature_nquads(), encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def servers(dump: Path):
    with started(OxigraphServer(preload=[dump])) as oxigraph, started(FusekiServer()) as fuseki:
        fuseki.load(dump.read_bytes(), content_type=N_QUADS)
        yield {"oxigraph": oxigraph, "fuseki": fuseki}


SOURCES = [
    "rdf-store memory",
    "rdf-store disk",
    "oxigraph auto",
    "oxigraph key-range",
    "fuseki auto",
    "fuseki key-range",
]


def _source(name: str, dump: Path, servers: dict[str, Any], store: Path) -> dict[str, Any]:
    if name == "rdf-file":
        return {"kind": "rdf-file", "paths": [str(dump)]}
    if name.startswith("rdf-store"):
        disk = {"store_folder": str(store)} if name.endswith("disk") else {}
        return {"kind": "rdf-store", "paths": [str(dump)], **disk}
    server, paging = name.split()
    if paging == "auto":
        return endpoint(servers[server].query_url, page_size=40)
    return endpoint(servers[server].query_url, paging=paging, page_size=30)


@pytest.fixture(scope="module")
def reference(dump, tmp_path_factory) -> dict[str, dict[str, Any]]:
    """``rdf-file``'s snapshot of each configuration, compared as :func:`_compared` does."""
    out = {}
    for config, rdf in CONFIGS.items():
        root = tmp_path_factory.mktemp(f"rdf-file-{config}")
        pull_spec(_doc(_source("rdf-file", dump, {}, root), root, rdf))
        snap = Snapshot.open(root / "snapshot")
        # the graph is not trivial under any configuration
        assert snap.vertices("A").num_rows > 10 and snap.vertices("anon").num_rows == 12
        assert snap.rows("edges", snap.relations[0].dotted) > 10
        out[config] = _compared(root / "snapshot")
    return out


CASES = [(config, name) for config in sorted(CONFIGS) for name in SOURCES]


@pytest.mark.parametrize(("config", "name"), CASES)
def test_every_source_gives_the_same_snapshot(
    dump, servers, reference, tmp_path, config, name, monkeypatch
):
    monkeypatch.setattr("graphmill.connectors.sparql._building.MAP_ROWS", 5)
    source = _source(name, dump, servers, tmp_path / "store")
    pull_spec(_doc(source, tmp_path, CONFIGS[config]))
    assert _compared(tmp_path / "snapshot") == reference[config], f"{name} differs ({config})"
