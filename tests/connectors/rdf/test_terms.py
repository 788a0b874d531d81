"""Term readers: SPARQL TSV and JSON results, canonical N-Quads, string escapes."""

from __future__ import annotations

import json

import pyarrow as pa
import pyoxigraph as ox
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from graphmill.connectors.rdf._terms import (
    read_json_results,
    read_nquads,
    read_tsv_results,
    unescape,
)
from graphmill.connectors.rdf._xsd import RDF, RDF_LANG_STRING, XSD, XSD_STRING
from graphmill.errors import MalformedResponseError

# From memory of the TSV example in W3C "SPARQL 1.1 Query Results CSV and TSV Formats"
# (section 4): IRIs in <>, blank nodes as _:label, literals in Turtle syntax with escapes,
# language tags, a number in Turtle short form, and an unbound (empty) cell.
SPEC_TSV = (
    "?x\t?literal\n"
    '<http://example/x>\t"String"\n'
    '<http://example/x>\t"String-with-dquote\\""\n'
    '_:b0\t"Blank node"\n'
    '<http://example/x>\t""\n'
    '<http://example/x>\t"String-with-lang"@en\n'
    "<http://example/x>\t123\n"
    "<http://example/x>\t\n"
)
# From memory of the example in W3C "SPARQL 1.1 Query Results JSON Format" (section 4).
SPEC_JSON = {
    "head": {"link": ["http://www.w3.org/TR/rdf-sparql-XMLres/example.rq"],
             "vars": ["x", "hpage", "name", "mbox", "age", "blurb", "friend"]},
    "results": {"bindings": [
        {"x": {"type": "bnode", "value": "r1"},
         "hpage": {"type": "uri", "value": "http://work.example.org/alice/"},
         "name": {"type": "literal", "value": "Alice"},
         "mbox": {"type": "literal", "value": ""},
         "blurb": {"datatype": RDF + "XMLLiteral", "type": "literal",
                   "value": '<p xmlns="http://www.w3.org/1999/xhtml">My name is <b>alice</b></p>'},
         "friend": {"type": "bnode", "value": "r2"}},
        {"x": {"type": "bnode", "value": "r2"},
         "hpage": {"type": "uri", "value": "http://work.example.org/bob/"},
         "name": {"type": "literal", "value": "Bob", "xml:lang": "en"},
         "mbox": {"type": "uri", "value": "mailto:bob@work.example.org"},
         "friend": {"type": "bnode", "value": "r1"}},
    ]},
}  # fmt: skip


def test_spec_tsv_example():
    table = read_tsv_results(SPEC_TSV.encode())
    assert (
        table.column("x").to_pylist()
        == ["http://example/x"] * 2 + ["_:b0"] + ["http://example/x"] * 4
    )
    assert table.column("x_kind").to_pylist() == ["iri", "iri", "blank"] + ["iri"] * 4
    assert table.column("literal").to_pylist() == [
        "String",
        'String-with-dquote"',
        "Blank node",
        "",
        "String-with-lang",
        "123",
        None,
    ]
    assert table.column("literal_datatype").to_pylist() == [
        XSD_STRING,
        XSD_STRING,
        XSD_STRING,
        XSD_STRING,
        RDF_LANG_STRING,
        XSD + "integer",
        None,
    ]
    assert table.column("literal_lang").to_pylist() == ["", "", "", "", "en", "", None]
    assert table.column("x_datatype").null_count == len(table)


def test_spec_json_example():
    table = read_json_results(json.dumps(SPEC_JSON))
    rows = table.to_pylist()
    assert [r["x"] for r in rows] == ["_:r1", "_:r2"]
    assert [r["friend"] for r in rows] == ["_:r2", "_:r1"]
    assert [(r["name"], r["name_datatype"], r["name_lang"]) for r in rows] == [
        ("Alice", XSD_STRING, ""),
        ("Bob", RDF_LANG_STRING, "en"),
    ]
    assert [(r["mbox"], r["mbox_kind"]) for r in rows] == [
        ("", "literal"),
        ("mailto:bob@work.example.org", "iri"),
    ]
    assert [r["age"] for r in rows] == [None, None]  # "age" is never bound
    assert rows[0]["blurb_datatype"] == RDF + "XMLLiteral" and rows[1]["blurb_kind"] is None


def test_typed_literal_from_older_servers():
    # "typed-literal" is the SPARQL XML-results-era type that some servers still send.
    doc = {"head": {"vars": ["v"]}, "results": {"bindings": [
        {"v": {"type": "typed-literal", "value": "1", "datatype": XSD + "integer"}}]}}  # fmt: skip
    row = read_json_results(json.dumps(doc)).to_pylist()[0]
    assert (row["v"], row["v_kind"], row["v_datatype"]) == ("1", "literal", XSD + "integer")


@pytest.mark.parametrize(
    ("escaped", "text"),
    [
        (r"a\tb", "a\tb"),
        (r"line\nbreak\r", "line\nbreak\r"),
        (r"say \"hi\"", 'say "hi"'),
        (r"it\'s", "it's"),
        (r"back\\slash", "back\\slash"),
        (r"\\n", "\\n"),  # an escaped backslash, then the letter n
        (r"\\\n", "\\\n"),
        (r"caf\u00E9", "café"),
        (r"\U0001F600", "\U0001f600"),
        (r"\\u00E9", "\\u00E9"),  # escaped backslash: no UCHAR here
        ("plain", "plain"),
    ],
)
def test_unescape(escaped, text):
    assert unescape(pa.array([escaped, None])).to_pylist() == [text, None]


TRICKY = [
    'quote " inside', "tab\tand\nnewline\r", "back\\slash \\n not a newline", "'single'",
    "non-ASCII: é ß 漢字 😀", "", " leading and trailing ", "\x01\x1f controls", "ends with \\",
]  # fmt: skip


def _store_with(literals: list[ox.Literal]) -> ox.Store:
    store = ox.Store()
    for i, lit in enumerate(literals):
        store.add(
            ox.Quad(ox.NamedNode(f"http://example/s{i}"), ox.NamedNode("http://example/p"), lit)
        )
    return store


def _read_back(store: ox.Store, fmt: str) -> list[tuple]:
    query = "SELECT ?s ?o WHERE { ?s ?p ?o }"
    results_format = getattr(ox.QueryResultsFormat, fmt)
    data = store.query(query).serialize(format=results_format)
    table = read_tsv_results(data) if fmt == "TSV" else read_json_results(data)
    rows = sorted(table.to_pylist(), key=lambda r: int(r["s"].rsplit("s", 1)[1]))
    return [(r["o"], r["o_datatype"], r["o_lang"]) for r in rows]


@pytest.mark.parametrize("fmt", ["TSV", "JSON"])
def test_round_trip_through_oxigraph_serializers(fmt):
    literals = [ox.Literal(t) for t in TRICKY]
    literals += [ox.Literal("chat", language="fr"), ox.Literal("x", language="en-gb")]
    literals += [ox.Literal("1", datatype=ox.NamedNode(XSD + "integer"))]
    literals += [ox.Literal("<p>\t</p>", datatype=ox.NamedNode("http://example/dt"))]
    expected = [(t, XSD_STRING, "") for t in TRICKY]
    expected += [("chat", RDF_LANG_STRING, "fr"), ("x", RDF_LANG_STRING, "en-gb")]
    expected += [("1", XSD + "integer", ""), ("<p>\t</p>", "http://example/dt", "")]
    assert _read_back(_store_with(literals), fmt) == expected


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.text(st.characters(exclude_categories=("Cs",))), min_size=1, max_size=8))
def test_any_text_survives_tsv_json_and_nquads(texts):
    store = _store_with([ox.Literal(t) for t in texts])
    assert [row[0] for row in _read_back(store, "TSV")] == texts
    assert [row[0] for row in _read_back(store, "JSON")] == texts
    quads = read_nquads(ox.serialize(store, format=ox.RdfFormat.N_QUADS))
    assert sorted(quads.column("o").to_pylist()) == sorted(texts)


def test_nquads_graph_column():
    data = (
        b'<http://e/s> <http://e/p> "a <http://e/x>" .\n'
        b'<http://e/s> <http://e/p> "b _:x" <http://e/g> .\n'
        b"<http://e/s> <http://e/p> <http://e/o> _:g2 .\n"
        b'<http://e/s> <http://e/p> "c"^^<http://e/dt> .\n'
    )
    table = read_nquads(data)
    assert table.column("o").to_pylist() == ["a <http://e/x>", "b _:x", "http://e/o", "c"]
    assert table.column("g").to_pylist() == [None, "http://e/g", "_:g2", None]
    assert table.column("o_datatype").to_pylist() == [XSD_STRING, XSD_STRING, None, "http://e/dt"]


@pytest.mark.parametrize(
    "document",
    [
        b"x\ty\n<a>\t<b>\n",  # header without ?
        b"?x\n<unterminated\n",
        b'?x\n"open string\n',
        b'?x\n"bad suffix"@\n',
        b"?x\tother\n",
        b"?x\n<a>\t<b>\n",  # more cells than variables
        b"?x\nname:prefixed\n",
    ],
)
def test_malformed_tsv_is_refused(document):
    with pytest.raises(MalformedResponseError) as caught:
        read_tsv_results(document)
    assert "\n" not in caught.value.one_line()


@pytest.mark.parametrize(
    "document",
    [
        "not json",
        "{}",
        json.dumps({"head": {"vars": ["x"]}, "results": {"bindings": [{"x": {"type": "triple"}}]}}),
    ],
)
def test_malformed_json_is_refused(document):
    with pytest.raises(MalformedResponseError):
        read_json_results(document)


def test_empty_results():
    assert read_tsv_results(b"?x\t?y\n").num_rows == 0
    assert read_tsv_results(b"?x\t?y\n").column_names[:4] == ["x", "x_kind", "x_datatype", "x_lang"]
    assert read_json_results('{"head": {"vars": ["x"]}, "results": {"bindings": []}}').num_rows == 0
