"""Small RDF datasets for the endpoint tests, each value with the text it comes from.

``LITERAL_CASES``: literals written in N-Triples syntax and the value the snapshot must hold,
per the W3C specs named beside each. ``IRI_CASES``: subjects whose IRIs hold characters that
must survive as written (RDF 1.1 Concepts, section 3.2: IRIs are compared as strings, so no
percent-decoding or normalisation may happen). ``GRAPH_QUADS``: things spread over the default
graph and two named graphs.
"""

from __future__ import annotations

import datetime as dt
import math
from typing import Any

EX = "http://e.test/"
XSD = "http://www.w3.org/2001/XMLSchema#"
TYPE = "<http://www.w3.org/1999/02/22-rdf-syntax-ns#type>"
UTC = dt.UTC

# (case name, property, object in N-Triples syntax, expected value, source)
LITERAL_CASES: list[tuple[str, str, str, Any, str]] = [
    # strings: N-Triples ECHAR / UCHAR in the file; the server re-escapes them in its TSV
    # results (SPARQL 1.1 Query, section 19.7 "Escape sequences in strings"; section 19.8
    # grammar, productions STRING_LITERAL2 and ECHAR) and the reader must undo that.
    ("tab", "text", r'"a\tb"', "a\tb", "SPARQL 1.1 Query 19.7: \\t is U+0009"),
    ("newline", "text", r'"a\nb"', "a\nb", "SPARQL 1.1 Query 19.7: \\n is U+000A"),
    ("return", "text", r'"a\rb"', "a\rb", "SPARQL 1.1 Query 19.7: \\r is U+000D"),
    ("backspace", "text", r'"a\bb"', "a\bb", "SPARQL 1.1 Query 19.7: \\b is U+0008"),
    ("formfeed", "text", r'"a\fb"', "a\fb", "SPARQL 1.1 Query 19.7: \\f is U+000C"),
    ("dquote", "text", r'"say \"hi\""', 'say "hi"', 'SPARQL 1.1 Query 19.7: \\" is U+0022'),
    ("squote", "text", r'"it\'s"', "it's", "SPARQL 1.1 Query 19.7: \\' is U+0027"),
    ("backslash", "text", r'"C:\\temp\\new"', "C:\\temp\\new", "19.7: \\\\ is U+005C"),
    ("backslash_n", "text", r'"a\\nb"', "a\\nb", "19.7: an escaped backslash then n"),
    ("uchar4", "text", r'"caf\u00E9"', "café", "RDF 1.1 N-Triples, section 2.4: UCHAR \\u"),
    ("uchar8", "text", r'"smile \U0001F600"', "smile \U0001f600", "N-Triples 2.4: \\U"),
    (
        "angles",
        "text",
        '"<http://e.test/not-an-iri> ."',
        "<http://e.test/not-an-iri> .",
        "RDF 1.1 Concepts 3.3: a lexical form is any Unicode string",
    ),
    ("empty", "text", '""', "", "RDF 1.1 Concepts 3.3: the empty string is a lexical form"),
    ("lang", "text", '"chat"@fr', "chat", "RDF 1.1 Concepts 3.3: language-tagged string"),
    ("lang_region", "text", '"colour"@en-GB', "colour", "BCP47 tag with a region subtag"),
    # XML Schema Part 2 (1.0, 2nd edition) lexical spaces
    ("int_zeros", "count", f'"-0042"^^<{XSD}integer>', -42, "XSD 3.3.13: leading zeros, sign"),
    ("int_plus", "count", f'"+7"^^<{XSD}integer>', 7, "XSD 3.3.13: an optional + sign"),
    (
        "int_big",
        "count",
        f'"9223372036854775807"^^<{XSD}integer>',
        2**63 - 1,
        "XSD 3.3.13, the largest value an int64 column holds",
    ),
    ("long", "count", f'"12"^^<{XSD}long>', 12, "XSD 3.3.16: long derives from integer"),
    ("decimal", "amount", f'"-1.50"^^<{XSD}decimal>', -1.5, "XSD 3.2.3: decimal"),
    ("decimal_dot", "amount", f'".5"^^<{XSD}decimal>', 0.5, "XSD 3.2.3.1: '.5' is allowed"),
    ("double_exp", "amount", f'"1.5E2"^^<{XSD}double>', 150.0, "XSD 3.2.5: mantissa E exp"),
    ("double_inf", "amount", f'"INF"^^<{XSD}double>', math.inf, "XSD 3.2.5: INF"),
    ("double_ninf", "amount", f'"-INF"^^<{XSD}double>', -math.inf, "XSD 3.2.5: -INF"),
    ("double_nan", "amount", f'"NaN"^^<{XSD}double>', math.nan, "XSD 3.2.5: NaN"),
    ("bool_1", "flag", f'"1"^^<{XSD}boolean>', True, "XSD 3.2.2.1: {true, false, 1, 0}"),
    ("bool_0", "flag", f'"0"^^<{XSD}boolean>', False, "XSD 3.2.2.1"),
    ("bool_true", "flag", f'"true"^^<{XSD}boolean>', True, "XSD 3.2.2.1"),
    ("date", "day", f'"2004-04-12"^^<{XSD}date>', dt.date(2004, 4, 12), "XSD 3.2.9"),
    (
        "date_tz",
        "day",
        f'"2004-04-12-05:00"^^<{XSD}date>',
        dt.date(2004, 4, 12),
        "XSD 3.2.9 with a timezone (dropped by graphmill, see the rdf package doc)",
    ),
    (
        "datetime_z",
        "moment",
        f'"2002-10-10T12:00:00Z"^^<{XSD}dateTime>',
        dt.datetime(2002, 10, 10, 12, tzinfo=UTC),
        "XSD 3.2.7: Z is UTC",
    ),
    (
        "datetime_offset",
        "moment",
        f'"2002-10-10T12:00:00-05:00"^^<{XSD}dateTime>',
        dt.datetime(2002, 10, 10, 17, tzinfo=UTC),
        "XSD 3.2.7 (example, from memory): 12:00-05:00 is 17:00Z",
    ),
    (
        "datetime_frac",
        "moment",
        f'"2002-10-10T12:00:00.5Z"^^<{XSD}dateTime>',
        dt.datetime(2002, 10, 10, 12, 0, 0, 500000, tzinfo=UTC),
        "XSD 3.2.7: fractional seconds",
    ),
]
PROPERTY_KINDS = {
    "text": "string",
    "count": "integer",
    "amount": "float",
    "flag": "boolean",
    "day": "date",
    "moment": "datetime",
}

# (IRI as written in N-Triples, the vertex_id it must give, source)
IRI_CASES: list[tuple[str, str, str]] = [
    (f"<{EX}plain>", f"{EX}plain", "SPARQL 1.1 Query 4.1.1"),
    (f"<{EX}caf\\u00E9>", f"{EX}café", "N-Triples 2.4: UCHAR in an IRIREF"),
    (f"<{EX}résumé>", f"{EX}résumé", "RDF 1.1 Concepts 3.2: IRIs may hold non-ASCII"),
    (f"<{EX}face\U0001f600>", f"{EX}face\U0001f600", "a character beyond U+FFFF"),
    (f"<{EX}a%20b>", f"{EX}a%20b", "RDF 1.1 Concepts 3.2: no percent-decoding"),
    (f"<{EX}a%22b>", f"{EX}a%22b", "an encoded quote stays encoded"),
    (f"<{EX}it's(1);x=2&y#frag>", f"{EX}it's(1);x=2&y#frag", "RFC 3987 sub-delims"),
    (f"<{EX}q?x=1>", f"{EX}q?x=1", "a query part"),
    (f"<{EX}~tilde/./..>", f"{EX}~tilde/./..", "dot segments are not removed (3.2)"),
    (f"<{EX}Z>", f"{EX}Z", "upper case sorts before lower case by code point"),
    ("<urn:isbn:0451450523>", "urn:isbn:0451450523", "a URN is an IRI too"),
]


def literal_ntriples() -> str:
    """Each literal case on its own ``ex:Thing``, named ``ex:case/<name>``."""
    lines = []
    for name, prop, obj, _, _ in LITERAL_CASES:
        s = f"<{EX}case/{name}>"
        lines += [f"{s} {TYPE} <{EX}Thing> .", f"{s} <{EX}{prop}> {obj} ."]
    for written, _, _ in IRI_CASES:
        lines += [f"{written} {TYPE} <{EX}Thing> .", f'{written} <{EX}text> "iri case" .']
    lines.append(f"<{IRI_CASES[1][0][1:-1]}> <{EX}linked> {IRI_CASES[3][0]} .")
    return "\n".join(lines) + "\n"


def literal_spec_types() -> dict[str, Any]:
    """The vertex_types section mapping :func:`literal_ntriples`."""
    props = {p: {"from": f"ex:{p}", "kind": k} for p, k in PROPERTY_KINDS.items()}
    return {"thing": {"match": "ex:Thing", "properties": props}}


GRAPH_NS = "http://g.test/"


def graph_nquads() -> str:
    """Things (namespace ``GRAPH_NS``) in the default graph (a, b), in <g1> (c, d) and in
    <g2> (d, e): d is typed in two graphs; every thing has a label in the graph that types it
    and a link to the next letter; <g2> repeats one triple of <g1>."""
    where = [("a", ""), ("b", ""), ("c", "g1"), ("d", "g1"), ("e", "g2"), ("d", "g2")]
    lines = []
    for name, graph in where:
        g = f" <{GRAPH_NS}{graph}>" if graph else ""
        s = f"<{GRAPH_NS}{name}>"
        lines.append(f"{s} {TYPE} <{GRAPH_NS}Thing>{g} .")
        lines.append(f'{s} <{GRAPH_NS}label> "{name} in {graph or "default"}"{g} .')
        lines.append(f"{s} <{GRAPH_NS}linked> <{GRAPH_NS}{chr(ord(name) + 1)}>{g} .")
    return "\n".join(lines) + "\n"


PAGING_NS = "http://p.test/"


def paging_ntriples(things: int = 700, blanks: int = 40) -> str:
    """Many things (namespace ``PAGING_NS``) for paging tests: IRIs of varied shapes (the
    ``IRI_CASES`` characters, digits, non-ASCII) and blank-node things, with one to three
    labels each (``label`` is multi-valued) and links, so slices cut across all of them."""
    shapes = [
        "n{:04d}",
        "caf\u00e9/{}",
        "face\U0001f600{}",
        "a%20b/{}",
        "it's({});x",
        "Z{}",
        "~t/./{}",
        "q?x={}",
    ]
    nodes = [f"<{PAGING_NS}{shapes[i % len(shapes)].format(i)}>" for i in range(things)]
    nodes += [f"_:thing{i}" for i in range(blanks)]
    lines = []
    for i, s in enumerate(nodes):
        lines.append(f"{s} {TYPE} <{PAGING_NS}Thing> .")
        for k in range(1 + i % 3):
            lines.append(f'{s} <{PAGING_NS}label> "label {k} of {i}" .')
        lines.append(f'{s} <{PAGING_NS}size> "{i % 97}"^^<{XSD}integer> .')
        lines.append(f"{s} <{PAGING_NS}linked> {nodes[(i * 7 + 3) % len(nodes)]} .")
    return "\n".join(lines) + "\n"
