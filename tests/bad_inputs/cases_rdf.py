"""Malformed RDF dumps through both dump sources (``rdf-file`` and the embedded ``rdf-store``):
exit 2 with the file and the line of the defect; a term too long for the parser likewise."""

from __future__ import annotations

from tests.bad_inputs._corpus import Case, spec_argv

RDF = "http://www.w3.org/1999/02/22-rdf-syntax-ns#type"
GOOD_LINES = [
    f"<http://ex.example/a> <{RDF}> <http://ex.example/Person> .",
    f"<http://ex.example/b> <{RDF}> <http://ex.example/Person> .",
    "<http://ex.example/a> <http://ex.example/knows> <http://ex.example/b> .",
    '<http://ex.example/a> <http://ex.example/age> "41" .',
]
C, P, D, G = (f"<http://ex.example/{name}>" for name in "cpdg")
FORMATS = {"n-triples": "data.nt", "n-quads": "data.nq", "turtle": "data.ttl"}


def rdf_spec(kind: str, fmt: str) -> str:
    return (
        "spec_version: 1\n"
        f"source: {{kind: {kind}, paths: [{FORMATS[fmt]}], format: {fmt}}}\n"
        'rdf: {prefixes: {ex: "http://ex.example/"}}\n'
        "vertex_types:\n"
        '  person: {match: "ex:Person", properties: {age: {from: "ex:age", kind: integer}}}\n'
        'relations: [{from: person, name: knows, match: "ex:knows", to: person}]\n'
        "output: {bundle: out/bundle}\n"
    )


def with_line(bad: str | bytes, at: int) -> bytes:
    """The good lines with ``bad`` inserted as (1-based) line ``at``."""
    lines: list[bytes] = [line.encode() for line in GOOD_LINES]
    lines.insert(at - 1, bad if isinstance(bad, bytes) else bad.encode())
    return b"\n".join(lines) + b"\n"


TURTLE_HEAD = "@prefix ex: <http://ex.example/> .\n"
# (name, format, file bytes, line of the defect)
DEFECTS: list[tuple[str, str, bytes, int]] = [
    (
        "nt-missing-dot",
        "n-triples",
        with_line("<http://ex.example/c> <http://ex.example/p> <http://ex.example/d>", 3),
        3,
    ),
    (
        "nt-relative-iri",
        "n-triples",
        with_line("<c> <http://ex.example/p> <http://ex.example/d> .", 2),
        2,
    ),
    (
        "nt-space-in-iri",
        "n-triples",
        with_line("<http://ex.example/c d> <http://ex.example/p> <http://ex.example/d> .", 5),
        5,
    ),
    (
        "nt-unterminated-literal",
        "n-triples",
        with_line('<http://ex.example/c> <http://ex.example/p> "open .', 4),
        4,
    ),
    (
        "nt-bad-escape",
        "n-triples",
        with_line('<http://ex.example/c> <http://ex.example/p> "a\\qb" .', 2),
        2,
    ),
    (
        "nt-not-utf8",
        "n-triples",
        with_line(b'<http://ex.example/c> <http://ex.example/p> "\xff\xfe" .', 3),
        3,
    ),
    (
        "nt-literal-subject",
        "n-triples",
        with_line('"s" <http://ex.example/p> <http://ex.example/d> .', 1),
        1,
    ),
    ("nt-prefixed-name", "n-triples", with_line("ex:c <http://ex.example/p> ex:d .", 2), 2),
    (
        "nt-four-terms",
        "n-triples",
        with_line(
            f"{C} {P} {D} {G} .",
            3,
        ),
        3,
    ),
    (
        "nq-five-terms",
        "n-quads",
        with_line(
            f"{C} {P} {D} {G} <http://ex.example/h> .",
            2,
        ),
        2,
    ),
    (
        "nq-literal-graph",
        "n-quads",
        with_line('<http://ex.example/c> <http://ex.example/p> <http://ex.example/d> "g" .', 4),
        4,
    ),
    (
        "ttl-undefined-prefix",
        "turtle",
        (TURTLE_HEAD + "ex:a a ex:Person .\nzz:b a ex:Person .\n").encode(),
        3,
    ),
    (
        "ttl-missing-dot",
        "turtle",
        (TURTLE_HEAD + "ex:a a ex:Person .\nex:b a ex:Person\nex:c a ex:Person .\n").encode(),
        3,
    ),
    ("ttl-bad-language-tag", "turtle", (TURTLE_HEAD + 'ex:a ex:age "x"@-en .\n').encode(), 2),
]
HUGE = (
    "\n".join(GOOD_LINES[:3]).encode()
    + b'\n<http://ex.example/a> <http://ex.example/bio> "'
    + b"x" * (17 << 20)
    + b'" .\n'
)

CASES = [
    Case(
        name=f"rdf-{kind}-{name}",
        category="rdf",
        files={"spec.yaml": rdf_spec(kind, fmt), FORMATS[fmt]: data},
        argv=spec_argv("pull"),
        exit_code=2,
        where=f"{FORMATS[fmt]}:{line}",
    )
    for kind in ("rdf-file", "rdf-store")
    for name, fmt, data, line in DEFECTS
] + [
    Case(
        name=f"rdf-{kind}-term-beyond-16-mib",
        category="rdf",
        files={"spec.yaml": rdf_spec(kind, "n-triples"), "data.nt": HUGE},
        argv=spec_argv("pull"),
        exit_code=2,
        where="data.nt:4",
        says="longer than the RDF parser's limit",
    )
    for kind in ("rdf-file", "rdf-store")
]
