"""One gate for every source: the same defective graph, read from CSV, Parquet, an RDF dump
(``rdf-file`` and ``rdf-store``), a live Oxigraph server and a live Gremlin Server, gives the
same findings: rule ids, severities, counts and samples (IDs and the values as the source
wrote them).

The defects: ``age`` is declared integer and p3's is ``abc``; ``score`` (no declared kind)
mixes integers with the text ``high``; ``nick`` is read from the key ``nickname``, which the
source does not have (it has ``nick_name``): an ``absent-property`` error with a
did-you-mean, except from table files, which refuse a missing column at pull time (exit 2,
with the same did-you-mean). The counts are worked out by hand.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pyarrow as pa
import pyarrow.csv as pacsv
import pyarrow.parquet as pq
import pytest

from graphmill.connectors import open_source
from graphmill.errors import InputError
from graphmill.snapshot import Snapshot, pull
from graphmill.spec import spec_from_dict
from graphmill.validate import run_checks
from servers.manage import OxigraphServer
from servers.pytest_fixtures import started

EX = "http://example.org/"
XSD_INTEGER = "http://www.w3.org/2001/XMLSchema#integer"
ROWS = {  # id: (age, score, nick_name); None = no value
    "p1": ("30", "1", "ann"),
    "p2": ("41", "2", None),
    "p3": ("abc", "high", "cid"),
    "p4": ("25", None, "dee"),
}
PROPERTY_RULES = ("mixed-value-kinds", "unexpected-value-kind", "absent-property", "null-rate")


def _ntriples() -> str:
    lines = []
    for vid, (age, score, nick) in ROWS.items():
        s = f"<{EX}{vid}>"
        lines.append(f"{s} <http://www.w3.org/1999/02/22-rdf-syntax-ns#type> <{EX}Person> .")
        lines.append(f'{s} <{EX}age> "{age}"^^<{XSD_INTEGER}> .')
        if score is not None:
            typed = f"^^<{XSD_INTEGER}>" if score.isdigit() else ""
            lines.append(f'{s} <{EX}score> "{score}"{typed} .')
        if nick is not None:
            lines.append(f'{s} <{EX}nick_name> "{nick}" .')
    return "\n".join(lines) + "\n"


def _table() -> pa.Table:
    columns = list(zip(*ROWS.values(), strict=True))
    return pa.table(
        {
            "id": list(ROWS),
            "age": list(columns[0]),
            "score": list(columns[1]),
            "nick_name": list(columns[2]),
        }
    )


def _document(root: Path, source: dict[str, Any], rdf: bool, nick: bool = True) -> dict[str, Any]:
    key = (lambda k: f"ex:{k}") if rdf else (lambda k: k)
    document: dict[str, Any] = {
        "spec_version": 1,
        "source": source,
        "vertex_types": {
            "person": {
                "match": "ex:Person" if rdf else "person",
                "properties": {
                    "age": {"from": key("age"), "kind": "integer"},
                    "score": {"from": key("score")},
                    **({"nick": {"from": key("nickname")}} if nick else {}),
                },
            }
        },
        "output": {"bundle": str(root / "out" / "bundle")},
    }
    if rdf:
        document["rdf"] = {"prefixes": {"ex": EX}}
    return document


def _findings(root: Path, document: dict[str, Any]) -> dict[tuple[str, str], dict[str, Any]]:
    """Property findings by (rule, property), IDs without the RDF namespace."""
    spec = spec_from_dict(document, base_dir=root)
    pull(spec, open_source(spec))
    report = run_checks(spec, Snapshot.open(spec.output.snapshot))
    out = {}
    for f in report.findings:
        if f.rule in PROPERTY_RULES:
            sample = [
                {k: (str(v).removeprefix(EX) if k == "vertex_id" else v) for k, v in row.items()}
                for row in f.sample
            ]
            out[(f.rule, f.subject["property"])] = {
                "severity": f.severity,
                "count": f.count,
                "denominator": f.denominator,
                "sample": sample,
                "did_you_mean": f.details.get("did_you_mean"),
            }
    return out


EXPECTED = {
    ("unexpected-value-kind", "age"): {
        "severity": "error",
        "count": 1,
        "denominator": 4,  # 3 integers + 1 ill-typed
        "sample": [{"vertex_id": "p3", "value": "abc"}],
    },
    ("mixed-value-kinds", "score"): {
        "severity": "error",
        "count": 1,  # "high" against two integers
        "denominator": 3,
        "sample": [{"vertex_id": "p3", "value": "high"}],
    },
}
ABSENT = {"severity": "error", "count": 1, "denominator": 1, "sample": []}


def _check(found: dict[tuple[str, str], dict[str, Any]], suggestion: str | None) -> None:
    expected = dict(EXPECTED)
    if suggestion is not None:
        expected[("absent-property", "nick")] = ABSENT
    assert set(found) == set(expected)
    for key, want in expected.items():
        assert {k: found[key][k] for k in want} == want, key
    if suggestion is not None:
        assert found[("absent-property", "nick")]["did_you_mean"] == [suggestion]


@pytest.fixture(scope="module")
def files(tmp_path_factory: pytest.TempPathFactory) -> Path:
    root = tmp_path_factory.mktemp("gate")
    table = _table()
    pacsv.write_csv(table, root / "people.csv")
    pq.write_table(table, root / "people.parquet")
    (root / "people.nt").write_text(_ntriples(), encoding="utf-8")
    return root


@pytest.mark.parametrize("name", ["people.csv", "people.parquet"])
def test_table_files(files: Path, tmp_path: Path, name: str) -> None:
    source = {
        "kind": "table-files",
        "vertex_files": [{"path": str(files / name), "id_column": "id", "type": "person"}],
    }
    _check(_findings(tmp_path, _document(tmp_path, source, rdf=False, nick=False)), None)


@pytest.mark.parametrize("name", ["people.csv", "people.parquet"])
def test_table_files_refuse_a_missing_column_with_a_did_you_mean(
    files: Path, tmp_path: Path, name: str
) -> None:
    source = {
        "kind": "table-files",
        "vertex_files": [{"path": str(files / name), "id_column": "id", "type": "person"}],
    }
    spec = spec_from_dict(_document(tmp_path, source, rdf=False), base_dir=tmp_path)
    with pytest.raises(InputError) as caught:
        pull(spec, open_source(spec))
    assert caught.value.exit_code == 2
    assert "missing column 'nickname'" in str(caught.value)
    assert "did you mean 'nick_name'?" in str(caught.value)


@pytest.mark.parametrize("kind", ["rdf-file", "rdf-store"])
def test_rdf_dumps(files: Path, tmp_path: Path, kind: str) -> None:
    source = {"kind": kind, "paths": [str(files / "people.nt")]}
    _check(_findings(tmp_path, _document(tmp_path, source, rdf=True)), "ex:nick_name")


@pytest.mark.servers
def test_sparql_endpoint(files: Path, tmp_path: Path) -> None:
    with started(OxigraphServer(preload=[files / "people.nt"])) as server:
        source = {"kind": "sparql-endpoint", "query_url": server.query_url}
        found = _findings(tmp_path, _document(tmp_path, source, rdf=True))
    _check(found, "ex:nick_name")


@pytest.mark.servers
def test_gremlin_server(gremlin_server: Any, tmp_path: Path) -> None:
    from tests.connectors.gremlin.gremlin_helpers import drop_labels, vertex, write_graph

    def value(text: str | None) -> Any:
        return int(text) if text is not None and text.isdigit() else text

    label = "gate_person"
    drop_labels(gremlin_server.url, [label])
    written = []
    for vid, (age, score, nick) in ROWS.items():
        props = {"age": value(age), "score": value(score), "nick_name": nick}
        written.append(vertex(vid, label, **{k: v for k, v in props.items() if v is not None}))
    write_graph(gremlin_server.url, written, [])
    try:
        document = _document(tmp_path, {"kind": "gremlin", "url": gremlin_server.url}, rdf=False)
        document["vertex_types"]["person"]["match"] = label
        _check(_findings(tmp_path, document), "nick_name")
    finally:
        drop_labels(gremlin_server.url, [label])
