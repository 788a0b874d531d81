"""rdf-file (DuckDB over staged quads) against rdf-store (SPARQL on Oxigraph), on random data.

The two kinds share only the term readers and the typing; the unit semantics are implemented
twice (``_facts.py`` and ``_queries.py``). Random graphs full of awkward literals -- forms
Oxigraph's store canonicalizes or reads leniently, ill-typed ones, escapes, language tags in
any case, triples repeated across graphs -- must give byte-identical snapshots.
"""

from __future__ import annotations

import random

import pytest
from rdfsource_helpers import EX, pull_snapshot, rdf_spec, table_hashes

from graphmill.connectors.rdf import _facts, _staging

X = "http://www.w3.org/2001/XMLSchema#"
AWKWARD = {
    "integer": ["1", "01", "+1", "-0", " 7 ", "abc", "99999999999999999999", "0x10", "1.0"],
    "int": ["1", "2147483648", "-5"],
    "byte": ["200", "-1"],
    "unsignedLong": ["18446744073709551615", "3"],
    "decimal": ["1.", "+.5", "-0.0", "00012.3400", "1e3", "2.50"],
    "double": ["inf", "Infinity", "+INF", "-INF", "NaN", "nan", "1e400", "1E-400", "1.", "-0",
               "0", "1267.43233E12"],
    "float": ["16777217", "1.1", "1e39", "0.1234567891"],
    "boolean": ["true", "1", "0", "TRUE", "00"],
    "dateTime": ["2020-01-01T00:00:00", "2020-01-01T24:00:00Z", "2020-01-01T00:00:00.000Z",
                 "2019-12-31T22:00:00Z", "2020-01-01T00:00:00+02:00", "2020-02-30T00:00:00Z",
                 "2020-01-01T00:00:00+15:00", "2020-01-01T00:00:00.1234567Z"],
    "date": ["2020-01-01", "2020-01-01Z", "2020-01-01+14:00", "2019-02-29", "0000-01-01"],
    "time": ["10:00:00", "10:00:00.000", "24:00:00", "10:00:00+00:00"],
    "duration": ["PT1H0M", "P1D", "PT60M"],
    "gYear": ["2020", "02020"],
    "string": ["plain", "  spaced  ", ""],
}  # fmt: skip
STRINGS = ['a "quoted" word', "tab\there", "new\nline", "back\\slash", "é漢😀", "x'y", "\\n"]
LANGS = ["en", "EN", "en-GB", "de", "fr-ca"]


def _escape(text: str) -> str:
    return text.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n").replace("\r", "\\r")


def random_dump(seed: int, subjects: int = 120) -> str:
    """N-Quads: typed subjects with random literal facts and links in four graphs (one of them
    named by a blank node)."""
    rng = random.Random(seed)
    nodes = [f"<{EX}n{i}>" for i in range(subjects)] + [f"_:b{i}" for i in range(subjects // 10)]
    graphs = ["", f" <{EX}g1>", f" <{EX}g2>", " _:graph3"]
    lines = []
    for node in nodes:
        for cls in rng.sample(["A", "B", "C", "Z"], rng.randint(0, 2)):
            lines.append(f"{node} <http://www.w3.org/1999/02/22-rdf-syntax-ns#type> <{EX}{cls}>")
        for _ in range(rng.randint(0, 6)):
            predicate = f"<{EX}{rng.choice(['p', 'q', 'r'])}>"
            roll = rng.random()
            if roll < 0.45:
                dtype = rng.choice(sorted(AWKWARD))
                value = f'"{_escape(rng.choice(AWKWARD[dtype]))}"^^<{X}{dtype}>'
            elif roll < 0.7:
                value = f'"{_escape(rng.choice(STRINGS))}"@{rng.choice(LANGS)}'
            elif roll < 0.8:
                value = f'"{_escape(rng.choice(STRINGS))}"'
            else:
                value = rng.choice([*nodes, f"<{EX}outside>"])
            lines.append(f"{node} {predicate} {value}")
    quads = [f"{line}{g} .\n" for line in lines for g in rng.sample(graphs, rng.choice([1, 1, 2]))]
    rng.shuffle(quads)
    return "".join(quads)


def _spec(root, kind, out, **rdf):
    props = {"p": {"from": "ex:p", "multi": True}, "q": {"from": "ex:q"}}
    types = {
        "A": {"match": "ex:A", "properties": props},
        "B": {"match": "ex:B", "properties": props},
    }
    types["C"] = {"match": "ex:C", "properties": {"r": {"from": "ex:r", "multi": True}}}
    relations = [
        {"from": "A", "name": "p", "to": "B", "match": "ex:p"},
        {"from": "C", "name": "r", "to": "A", "match": "ex:r"},
    ]
    return rdf_spec(root, kind, ["dump.nq"], types, relations, out=out, **rdf)


CONFIGS = [
    {},
    {"graphs": "union", "graph_property": "graph"},
    {"graphs": ["ex:g2", "ex:g1"], "several_types": "every-type"},
    {"graphs": "union", "languages": ["en", ""], "several_types": "every-type"},
    {"languages": ["en-gb", "DE"]},
]


@pytest.fixture(params=["blocks-default", "blocks-tiny"])
def blocks(request, monkeypatch):
    """rdf-file's staging blocks and DuckDB batches as shipped, or tiny: canonical literals
    per block and a subject's values split across batches must not change the snapshot."""
    if request.param == "blocks-tiny":
        monkeypatch.setattr(_staging, "CHUNK_QUADS", 7)
        monkeypatch.setattr(_facts, "BATCH_ROWS", 3)
    return request.param


@pytest.mark.parametrize("seed", [1, 2, 3])
@pytest.mark.parametrize("config", CONFIGS)
def test_both_kinds_agree_byte_for_byte(tmp_path, seed, config, blocks):
    (tmp_path / "dump.nq").write_text(random_dump(seed), encoding="utf-8")
    file_snap = pull_snapshot(_spec(tmp_path, "rdf-file", "file", **config))
    store_snap = pull_snapshot(_spec(tmp_path, "rdf-store", "store", **config), page_rows=7)
    assert table_hashes(file_snap) == table_hashes(store_snap)
    for vt in ("A", "B", "C"):
        assert file_snap.value_kinds("vertices", vt) == store_snap.value_kinds("vertices", vt)
    assert file_snap.document["warnings"] == store_snap.document["warnings"]
    assert sum(file_snap.vertices(vt).num_rows for vt in ("A", "B", "C")) > 25


def test_reject_fails_the_same_way(tmp_path):
    (tmp_path / "dump.nq").write_text(random_dump(4), encoding="utf-8")
    messages = []
    for kind in ("rdf-file", "rdf-store"):
        with pytest.raises(Exception) as caught:
            pull_snapshot(_spec(tmp_path, kind, kind, several_types="reject"))
        messages.append(caught.value.one_line())
    assert messages[0] == messages[1] and "several_types is 'reject'" in messages[0]
