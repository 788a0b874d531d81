"""A deterministic generated RDF dataset for differential tests and the SPARQL bench.

:func:`write_ntriples` writes about ``triples`` N-Triples lines: people, organisations and
projects (three vertex classes), three relations, typed literals of several XSD types
(integer, decimal, double, boolean, date, dateTime, gYear), language-tagged strings and
blank-node addresses (not mapped by :func:`dataset_spec`, so they must be skipped alike by
every source). The same arguments always give the same bytes.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

NS = "http://graphmill.test/gen/"
XSD = "http://www.w3.org/2001/XMLSchema#"
RDF_TYPE = "<http://www.w3.org/1999/02/22-rdf-syntax-ns#type>"
TRIPLES_PER_PERSON = 15  # what _person_lines writes per person (see the comments there)
_LANGS = ("en", "de", "fr", "en-GB")


def _typed(value: str, datatype: str) -> str:
    return f'"{value}"^^<{XSD}{datatype}>'


def _person_lines(i: int, rng_row: np.ndarray, n_people: int, n_orgs: int, n_projects: int) -> str:
    a, b, c, d, e, f, g = (int(v) for v in rng_row)
    s = f"<{NS}person/{i:07d}>"
    first = (i + 1 + b % (n_people - 2)) % n_people
    second = (first + 1 + c % (n_people - 2)) % n_people
    born = f"{1950 + c % 60:04d}-{1 + c % 12:02d}-{1 + c % 28:02d}"
    lang = _LANGS[a % len(_LANGS)]
    other = _LANGS[(a + 1) % len(_LANGS)]
    lines = [
        f"{s} {RDF_TYPE} <{NS}Person> .",  # 1
        f'{s} <{NS}name> "Person \\"{i}\\" no. {i}" .',  # 2: plain string with escaped quotes
        f"{s} <{NS}age> {_typed(str(18 + a % 70), 'integer')} .",  # 3
        f"{s} <{NS}score> {_typed(f'{b / 997:.6E}', 'double')} .",  # 4
        f"{s} <{NS}born> {_typed(born, 'date')} .",  # 5
        f"{s} <{NS}active> {_typed('true' if d % 3 else 'false', 'boolean')} .",  # 6
        f"{s} <{NS}seen> {_typed(f'2024-{1 + e % 12:02d}-{1 + e % 28:02d}T{e % 24:02d}:{f % 60:02d}:{g % 60:02d}Z', 'dateTime')} .",  # noqa: E501
        f'{s} <{NS}nick> "nick{i}"@{lang} .',  # 8
        f'{s} <{NS}nick> "surnom é{i}"@{other} .',  # 9: several languages, non-ASCII
        f"{s} <{NS}knows> <{NS}person/{first:07d}> .",  # 10
        f"{s} <{NS}knows> <{NS}person/{second:07d}> .",  # 11: never the same as the first
        f"{s} <{NS}worksFor> <{NS}org/{d % n_orgs:05d}> .",  # 12
        f"{s} <{NS}contributesTo> <{NS}project/{e % n_projects:05d}> .",  # 13
        f"{s} <{NS}address> _:addr{i} .",  # 14: a blank node (not a mapped vertex)
        f'_:addr{i} <{NS}city> "City {f % 500}" .',  # 15
    ]
    return "\n".join(lines)


def dataset_triples(triples: int = 1_000_000) -> int:
    """How many triples :func:`write_ntriples` writes when asked for ``triples``."""
    n_people = max(10, triples // TRIPLES_PER_PERSON)
    return n_people * TRIPLES_PER_PERSON + 4 * max(2, n_people // 50) + 4 * max(2, n_people // 20)


def write_ntriples(path: Path, *, triples: int = 1_000_000, seed: int = 20261202) -> int:
    """Write at least ``triples`` distinct triples to ``path`` (N-Triples, UTF-8); return how
    many were written."""
    n_people = max(10, triples // TRIPLES_PER_PERSON)
    n_orgs = max(2, n_people // 50)
    n_projects = max(2, n_people // 20)
    rng = np.random.default_rng(seed).integers(0, 1_000_000, size=(n_people, 7))
    count = 0
    with open(path, "w", encoding="utf-8", newline="\n") as out:
        for i in range(n_people):
            out.write(_person_lines(i, rng[i], n_people, n_orgs, n_projects))
            out.write("\n")
        count += n_people * TRIPLES_PER_PERSON
        for k in range(n_orgs):
            o = f"<{NS}org/{k:05d}>"
            out.write(f"{o} {RDF_TYPE} <{NS}Organization> .\n")
            out.write(f'{o} <{NS}label> "Org {k}"@en .\n')
            out.write(f"{o} <{NS}founded> {_typed(f'{1900 + k % 120}', 'gYear')} .\n")
            out.write(f"{o} <{NS}staff> {_typed(str(5 + k * 37 % 9000), 'int')} .\n")
            count += 4
        for k in range(n_projects):
            p = f"<{NS}project/{k:05d}>"
            out.write(f"{p} {RDF_TYPE} <{NS}Project> .\n")
            out.write(f'{p} <{NS}title> "Project {k}" .\n')
            out.write(
                f"{p} <{NS}budget> {_typed(f'{k * 1234 % 99991}.{k % 100:02d}', 'decimal')} .\n"
            )
            out.write(f"{p} <{NS}partOf> <{NS}org/{k % n_orgs:05d}> .\n")
            count += 4
    return count


def dataset_spec(source: dict[str, Any], out_dir: Path) -> dict[str, Any]:
    """A spec (as a mapping) that maps the dataset; ``source`` is the source section."""
    return {
        "spec_version": 1,
        "name": "generated",
        "source": source,
        "rdf": {"prefixes": {"g": NS, "xsd": XSD}},
        "vertex_types": {
            "person": {
                "match": "g:Person",
                "properties": {
                    "name": {"from": "g:name", "kind": "string"},
                    "age": {"from": "g:age", "kind": "integer"},
                    "score": {"from": "g:score", "kind": "float"},
                    "born": {"from": "g:born", "kind": "date"},
                    "active": {"from": "g:active", "kind": "boolean"},
                    "seen": {"from": "g:seen", "kind": "datetime"},
                    "nick": {"from": "g:nick", "multi": True},
                },
            },
            "organization": {
                "match": "g:Organization",
                "properties": {
                    "label": {"from": "g:label"},
                    "founded": {"from": "g:founded"},
                    "staff": {"from": "g:staff", "kind": "integer"},
                },
            },
            "project": {
                "match": "g:Project",
                "properties": {
                    "title": {"from": "g:title"},
                    "budget": {"from": "g:budget", "kind": "float"},
                },
            },
        },
        "relations": [
            {"from": "person", "name": "knows", "to": "person", "match": "g:knows"},
            {"from": "person", "name": "works_for", "to": "organization", "match": "g:worksFor"},
            {
                "from": "person",
                "name": "contributes_to",
                "to": "project",
                "match": "g:contributesTo",
            },
            {"from": "project", "name": "part_of", "to": "organization", "match": "g:partOf"},
        ],
        "output": {"bundle": str(out_dir / "bundle"), "snapshot": str(out_dir / "snapshot")},
    }
