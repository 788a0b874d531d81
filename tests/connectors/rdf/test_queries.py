"""Unit SPARQL: spec strings cannot change a query, and every query form runs and pages."""

from __future__ import annotations

import itertools

import pyoxigraph as ox
import pytest
from rdfsource_helpers import EX, rdf_spec

from graphmill.connectors import open_source
from graphmill.connectors.base import WorkUnit
from graphmill.connectors.rdf import KeyRange, read_tsv_results, unit_query, unit_variables
from graphmill.connectors.rdf._plan import plan_units
from graphmill.connectors.rdf._queries import string_literal
from graphmill.errors import InputError, SpecError

HOSTILE = [
    "ex:Person> } ; DROP ALL ; <x",
    'ex:Person" . ?s ?p ?o . "',
    "ex:Per son",
    "ex:Person\n} DROP ALL {",
    "ex:Person{x}",
    "ex:a|b",
    "ex:a^b",
    "ex:a`b",
    "ex:a\\u003E",
    "<http://example.org/a> } UNION { ?s ?p ?o",
    "<relative/iri>",
]
TURTLE = f"""@prefix ex: <{EX}> .
ex:alice a ex:Person ; ex:name "Alice" ; ex:knows ex:bob, _:x .
ex:bob a ex:Person ; ex:name "Bob"@en .
_:x a ex:Person .
ex:carol a ex:Person ; ex:name "Carol" .
"""


def _spec(tmp_path, **changes):
    vertex_types = {
        "Person": {"match": changes.pop("match", "ex:Person"),
                   "properties": {"name": {"from": changes.pop("prop", "ex:name"), "multi": True}}},
    }  # fmt: skip
    relations = [
        {"from": "Person", "name": "knows", "to": "Person", "match": changes.pop("rel", "ex:knows")}
    ]
    (tmp_path / "data.ttl").write_text(TURTLE, encoding="utf-8")
    return rdf_spec(tmp_path, "rdf-store", ["data.ttl"], vertex_types, relations, **changes)


@pytest.mark.parametrize("hostile", HOSTILE)
@pytest.mark.parametrize(
    ("field", "key_path"),
    [("match", "vertex_types.Person.match"), ("prop", "vertex_types.Person.properties.name.from"),
     ("rel", "relations[0].match")],
)  # fmt: skip
def test_hostile_iris_are_refused_before_any_query(tmp_path, hostile, field, key_path):
    spec = _spec(tmp_path, **{field: hostile})
    with pytest.raises(SpecError) as caught:
        open_source(spec)
    assert caught.value.key_path == key_path
    assert "\n" not in caught.value.one_line()
    with pytest.raises(SpecError):
        unit_query(spec, WorkUnit("vertices", "Person"))


@pytest.mark.parametrize("hostile", HOSTILE[:4])
def test_hostile_graph_names_are_refused(tmp_path, hostile):
    with pytest.raises(SpecError) as caught:
        open_source(_spec(tmp_path, graphs=["ex:g", hostile]))
    assert caught.value.key_path == "rdf.graphs[1]"


def test_hostile_prefix_iri_is_refused_by_the_spec_schema(tmp_path):
    with pytest.raises(SpecError):
        rdf_spec(
            tmp_path,
            "rdf-store",
            ["d.ttl"],
            {"P": {"match": "x:P"}},
            prefixes={"x": "http://a/> } #"},
        )


def _answer(store: ox.Store, query: str) -> list[tuple]:
    table = read_tsv_results(store.query(query).serialize(format=ox.QueryResultsFormat.TSV))
    names = [n for n in table.column_names if not n.endswith(("_kind", "_datatype", "_lang"))]
    return sorted(tuple(row[n] for n in names) for row in table.to_pylist())


@pytest.fixture
def loaded(tmp_path):
    spec = _spec(tmp_path)
    store = ox.Store()
    store.bulk_extend(ox.parse(TURTLE.encode(), format=ox.RdfFormat.TURTLE))
    return spec, store


@pytest.mark.parametrize(
    "bound",
    [
        '"} ; DROP ALL ; #',
        "a\nb",
        'quote " and \\ backslash',
        "\t\r\b\f",
        "é 漢字",
        "x') || true || ('",
    ],
)
def test_literals_are_escaped_so_the_query_keeps_its_shape(loaded, bound):
    spec, store = loaded
    unit = WorkUnit("vertices", "Person")
    before = len(store)
    query = unit_query(spec, unit, key_range=KeyRange(low=bound))
    # The bound is one string literal: the store reads it back unchanged, and the answer is
    # exactly the IRIs at or after it (computed here in Python), never more.
    assert _answer(store, f"SELECT ?v WHERE {{ BIND({string_literal(bound)} AS ?v) }}") == [
        (bound,)
    ]
    everything = _answer(store, unit_query(spec, unit))
    expected = [r for r in everything if not r[0].startswith("_:") and r[0] >= bound]
    assert _answer(store, query) == expected
    assert len(store) == before == 9  # a SELECT; nothing was changed


def test_codepoint_escapes_are_refused():
    # SPARQL 1.1, section 19.2: \u escapes may be decoded before parsing.
    with pytest.raises(InputError):
        string_literal("\\u0022 } DROP ALL")


@pytest.mark.parametrize("graphs", ["default", "union", ["ex:g1"], ["ex:g1", "ex:g2"]])
@pytest.mark.parametrize("several", ["first-declared", "every-type", "reject"])
@pytest.mark.parametrize("languages", [None, ["en"], ["", "de"]])
def test_every_unit_query_is_valid_sparql(tmp_path, graphs, several, languages):
    options = {"graphs": graphs, "several_types": several, "graph_property": "graph"}
    if languages is not None:
        options["languages"] = languages
    spec = rdf_spec(
        tmp_path, "rdf-store", ["d.trig"],
        {"A": {"match": "ex:A", "properties": {"p": {"from": "ex:p"}}}, "B": {"match": "ex:B"}},
        [{"from": "A", "name": "r", "to": "B", "match": "ex:r"}], **options,
    )  # fmt: skip
    store = ox.Store()
    for unit in plan_units(spec):
        query = unit_query(spec, unit)
        assert list(store.query(query)) == []
        assert query.startswith(
            "SELECT DISTINCT"
            if graphs in ("union", ["ex:g1", "ex:g2"]) and unit.facet != "graph"
            else "SELECT "
        )
        assert query.split(" WHERE")[0].endswith(
            " ".join("?" + v for v in unit_variables(spec, unit))
        )


def test_offset_pages_and_key_ranges_cover_the_unit(loaded):
    spec, store = loaded
    for unit in plan_units(spec):
        everything = _answer(store, unit_query(spec, unit))
        pages = [
            _answer(store, unit_query(spec, unit, limit=2, offset=o, ordered=True))
            for o in range(0, 12, 2)
        ]
        assert sorted(itertools.chain(*pages)) == everything
        ranges = [KeyRange(high=EX + "bob"), KeyRange(low=EX + "bob"), KeyRange(blank_nodes=True)]
        sliced = [_answer(store, unit_query(spec, unit, key_range=r)) for r in ranges]
        assert sorted(itertools.chain(*sliced)) == everything


@pytest.mark.parametrize("number", [-1, 1.5, True, "10"])
def test_limit_must_be_a_whole_number(loaded, number):
    spec, _ = loaded
    with pytest.raises(InputError):
        unit_query(spec, WorkUnit("vertices", "Person"), limit=number)


def test_distinct_can_be_forced_for_servers_with_a_union_default_graph(loaded):
    spec, _ = loaded
    unit = WorkUnit("edges", "Person.knows.Person")
    assert unit_query(spec, unit).startswith("SELECT ?source ?target")
    assert unit_query(spec, unit, distinct=True).startswith("SELECT DISTINCT ?source ?target")
