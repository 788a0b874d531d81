"""The gate: a defective value leads to its row, from every file source.

``build`` refuses with one line naming the first error finding, its subject and one offender
(ID and the value as the source wrote it), after a ``pull`` made in ``setup``; a column the
spec names but the file lacks is refused at pull with a did-you-mean. Every RDF case is run
through both ``rdf-file`` and ``rdf-store``.
"""

from __future__ import annotations

import io
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

from graphmill.cli import main
from tests.bad_inputs._corpus import Case, spec_argv, table_project, table_spec

EX = "http://example.org/"
XSD = "http://www.w3.org/2001/XMLSchema#"
RDF_TYPE = "http://www.w3.org/1999/02/22-rdf-syntax-ns#type"


def _pulled(root: Path) -> None:
    """Pull the project first: the case is about what ``build`` says of the snapshot."""
    assert main(["pull", str(root / "spec.yaml"), "--no-progress", "--json"]) == 0


def _parquet(columns: dict[str, list[str | None]]) -> bytes:
    sink = io.BytesIO()
    pq.write_table(pa.table({k: pa.array(v, pa.string()) for k, v in columns.items()}), sink)
    return sink.getvalue()


def _people(good: str, bad: str) -> str:
    """people.csv with p2's ``age,team`` cells set to ``bad``, the others to ``good``."""
    return f"ref,age,team\np1,{good}\np2,{bad}\np3,{good}\np4,{good}\n"


def _build_case(name: str, files: dict[str, str | bytes], says: str) -> Case:
    return Case(
        name=f"gate-{name}",
        category="gate",
        files=files,
        argv=spec_argv("build"),
        exit_code=1,
        says=says,
        setup=_pulled,
        may_leave=("out/*",),
    )


def _rdf_project(kind: str, triples: str, properties: str) -> dict[str, str | bytes]:
    spec = (
        "spec_version: 1\n"
        f"source: {{kind: {kind}, paths: [graph.nt]}}\n"
        f"rdf: {{prefixes: {{ex: '{EX}'}}}}\n"
        f"vertex_types:\n  person: {{match: 'ex:Person', properties: {properties}}}\n"
        "output: {bundle: out/bundle}\n"
    )
    members = "".join(f"<{EX}p{i}> <{RDF_TYPE}> <{EX}Person> .\n" for i in range(1, 4))
    return {"spec.yaml": spec, "graph.nt": members + triples}


def _typed(vid: str, pred: str, text: str, datatype: str | None) -> str:
    suffix = f"^^<{XSD}{datatype}>" if datatype else ""
    return f'<{EX}{vid}> <{EX}{pred}> "{text}"{suffix} .\n'


TABLE_CASES = [
    _build_case(
        "csv-integer-cell-is-text",
        table_project(files={"people.csv": _people("30,red", "thirty,blue")}),
        "unexpected-value-kind on person.age (e.g. vertex_id 'p2', value 'thirty')",
    ),
    _build_case(
        "csv-integer-cell-is-a-decimal",
        table_project(files={"people.csv": _people("30,red", "30.5,blue")}),
        "(e.g. vertex_id 'p2', value '30.5')",
    ),
    _build_case(
        "csv-boolean-cell-is-yes",
        table_project(
            table_spec(properties="{age: {kind: integer}, team: {kind: boolean}}"),
            files={"people.csv": _people("30,true", "31,yes")},
        ),
        "unexpected-value-kind on person.team (e.g. vertex_id 'p2', value 'yes')",
    ),
    _build_case(
        "csv-date-cell-is-impossible",
        table_project(
            table_spec(properties="{age: {kind: integer}, team: {kind: date}}"),
            files={"people.csv": _people("30,2020-01-02", "31,2020-13-45")},
        ),
        "(e.g. vertex_id 'p2', value '2020-13-45')",
    ),
    _build_case(
        "csv-datetime-cell-is-a-word",
        table_project(
            table_spec(properties="{age: {kind: integer}, team: {kind: datetime}}"),
            files={"people.csv": _people("30,2020-01-02T03:04:05Z", "31,soon")},
        ),
        "(e.g. vertex_id 'p2', value 'soon')",
    ),
    _build_case(
        "csv-float-cell-is-a-word",
        table_project(
            table_spec(properties="{age: {kind: float}, team: {kind: string}}"),
            files={"people.csv": _people("3.5,red", "lots,blue")},
        ),
        "unexpected-value-kind on person.age (e.g. vertex_id 'p2', value 'lots')",
    ),
    _build_case(
        "csv-undeclared-column-mixes-kinds",
        table_project(
            table_spec(properties="{age: {}, team: {kind: string}}"),
            files={"people.csv": "ref,age,team\np1,30,red\np2,31,red\np3,old,blue\np4,30,red\n"},
        ),
        "mixed-value-kinds on person.age (e.g. vertex_id 'p3', value 'old')",
    ),
    _build_case(
        "csv-edge-property-is-ill-typed",
        table_project(
            table_spec(
                relations="[{from: person, name: knows, to: person, "
                "properties: {since: {kind: integer}}}]"
            ),
            files={"knows.csv": "a,b,since\np1,p2,2020\np2,p1,last year\n"},
        ),
        "on person.knows.person/since (e.g. source_id 'p2', target_id 'p1', value 'last year')",
    ),
    _build_case(
        "parquet-integer-cell-is-text",
        table_project(
            table_spec(vertex_file="{path: people.parquet, id_column: ref, type: person}"),
            files={
                "people.parquet": _parquet(
                    {
                        "ref": ["p1", "p2", "p3", "p4"],
                        "age": ["30", "n/a", "25", "38"],
                        "team": ["red", "blue", "red", "blue"],
                    }
                )
            },
        ),
        "unexpected-value-kind on person.age (e.g. vertex_id 'p2', value 'n/a')",
    ),
    Case(
        name="gate-csv-misspelt-column-gets-a-did-you-mean",
        category="gate",
        files=table_project(table_spec(properties="{age: {kind: integer}, team: {from: teams}}")),
        argv=spec_argv("pull"),
        exit_code=2,
        where="people.csv:1",
        says="missing column 'teams' (did you mean 'team'?",
    ),
    Case(
        name="gate-parquet-misspelt-column-gets-a-did-you-mean",
        category="gate",
        files=table_project(
            table_spec(
                vertex_file="{path: people.parquet, id_column: ref, type: person}",
                properties="{age: {from: agee}, team: {}}",
            ),
            files={"people.parquet": _parquet({"ref": ["p1"], "age": ["3"], "team": ["r"]})},
        ),
        argv=spec_argv("pull"),
        exit_code=2,
        where="people.parquet",
        says="missing column 'agee' (did you mean 'age'?",
    ),
]

RDF_CASES = [
    case
    for kind in ("rdf-file", "rdf-store")
    for case in (
        _build_case(
            f"{kind}-integer-literal-outside-its-lexical-space",
            _rdf_project(
                kind,
                _typed("p1", "age", "30", "integer") + _typed("p2", "age", "abc", "integer"),
                "{age: {from: 'ex:age'}}",
            ),
            f"unexpected-value-kind on person.age (e.g. vertex_id '{EX}p2', value 'abc')",
        ),
        _build_case(
            f"{kind}-plain-string-where-an-integer-is-declared",
            _rdf_project(
                kind,
                _typed("p1", "age", "30", "integer") + _typed("p2", "age", "forty", None),
                "{age: {from: 'ex:age', kind: integer}}",
            ),
            f"(e.g. vertex_id '{EX}p2', value 'forty')",
        ),
        _build_case(
            f"{kind}-boolean-literal-outside-its-lexical-space",
            _rdf_project(
                kind,
                _typed("p1", "ok", "true", "boolean") + _typed("p3", "ok", "maybe", "boolean"),
                "{ok: {from: 'ex:ok'}}",
            ),
            f"(e.g. vertex_id '{EX}p3', value 'maybe')",
        ),
        _build_case(
            f"{kind}-misspelt-predicate-gets-a-did-you-mean",
            _rdf_project(
                kind,
                _typed("p1", "nick_name", "ann", None) + _typed("p2", "nick_name", "bo", None),
                "{nick: {from: 'ex:nickname'}}",
            ),
            "absent-property on person.nick (did you mean 'ex:nick_name'?)",
        ),
    )
]

CASES = TABLE_CASES + RDF_CASES
