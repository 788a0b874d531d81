"""The table-files source: CSV and Parquet dumps with declared column roles."""

from __future__ import annotations

import dataclasses
import datetime as dt

import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from graphmill.connectors import open_source
from graphmill.errors import InputError, SourceUnavailableError, SpecError
from graphmill.snapshot import Snapshot, pull
from graphmill.spec import RelationKey, spec_from_dict

PEOPLE = (
    "ref,kind,age,score,joined,note\n"
    "p2,person,41,1.5,2021-03-04T05:06:07Z,\n"
    "p1,person,35,2,2020-01-02,hello\n"
    'c1,company,,,,"multi\nline"\n'
)
LINKS = "from,to,rel,since\np1,p2,knows,2020\np2,c1,works_at,2019\np1,c1,works_at,x\n"


def spec_for(tmp_path, people="people.csv", links="links.csv", **vt_props):
    return spec_from_dict(
        {
            "spec_version": 1,
            "source": {
                "kind": "table-files",
                "vertex_files": [{"path": people, "id_column": "ref", "type_column": "kind"}],
                "edge_files": [
                    {
                        "path": links,
                        "source_column": "from",
                        "target_column": "to",
                        "relation_column": "rel",
                    }
                ],
            },
            "vertex_types": {
                "person": {
                    "properties": vt_props
                    or {
                        "age": {"kind": "integer"},
                        "score": None,
                        "joined": {"kind": "datetime"},
                        "note": None,
                    }
                },
                "company": {"properties": {"note": None}},
            },
            "relations": [
                {"from": "person", "name": "knows", "to": "person", "undirected": True},
                {
                    "from": "person",
                    "name": "works_at",
                    "to": "company",
                    "properties": {"since": {"kind": "integer"}},
                },
            ],
            "output": {"bundle": "out/b"},
        },
        base_dir=tmp_path,
    )


def test_csv_dump_becomes_a_typed_snapshot(tmp_path, write):
    write("people.csv", PEOPLE)
    write("links.csv", LINKS)
    spec = spec_for(tmp_path)
    info = pull(spec, open_source(spec))
    assert info.vertex_counts == {"person": 2, "company": 1}
    snap = Snapshot.open(spec.output.snapshot)
    people = snap.vertices("person")
    assert people.column("vertex_id").to_pylist() == ["p1", "p2"]
    assert people.column("age").to_pylist() == [35, 41]
    assert people.schema.field("age").type == pa.int64()
    # "2" and "1.5": integer and float text meet in float64 (our inference rule).
    assert people.column("score").to_pylist() == [2.0, 1.5]
    # a date-only cell does not have the declared datetime kind: it becomes null and is counted.
    assert people.column("joined").to_pylist() == [
        None,
        dt.datetime(2021, 3, 4, 5, 6, 7, tzinfo=dt.UTC),
    ]
    assert snap.value_kinds("vertices", "person")["joined"] == {"date": 1, "datetime": 1}
    assert snap.vertices("company").column("note").to_pylist() == ["multi\nline"]
    works = snap.edges(RelationKey("person", "works_at", "company"))
    assert works.column("source_id").to_pylist() == ["p1", "p2"]
    assert works.column("since").to_pylist() == [None, 2019]
    assert snap.value_kinds("edges", "person.works_at.company")["since"] == {
        "integer": 1,
        "string": 1,
    }


def test_parquet_and_csv_give_identical_snapshots(tmp_path, write):
    write("people.csv", PEOPLE)
    write("links.csv", LINKS)
    spec_csv = spec_for(tmp_path)
    pull(spec_csv, open_source(spec_csv))
    for name in ("people", "links"):
        table = pa.csv.read_csv(
            tmp_path / f"{name}.csv",
            convert_options=pa.csv.ConvertOptions(strings_can_be_null=False),
            read_options=pa.csv.ReadOptions(),
            parse_options=pa.csv.ParseOptions(newlines_in_values=True),
        )
        table = table.cast(pa.schema([(f.name, pa.string()) for f in table.schema]))
        pq.write_table(table, tmp_path / f"{name}.parquet")
    spec_pq = spec_for(tmp_path, people="people.parquet", links="links.parquet")
    spec_pq = dataclasses.replace(
        spec_pq,
        output=dataclasses.replace(
            spec_pq.output, snapshot=tmp_path / "pq.snapshot", bundle=tmp_path / "pq"
        ),
    )
    pull(spec_pq, open_source(spec_pq))
    a, b = Snapshot.open(spec_csv.output.snapshot), Snapshot.open(tmp_path / "pq.snapshot")
    assert [t["sha256"] for t in a.document["tables"]] == [
        t["sha256"] for t in b.document["tables"]
    ]


def test_missing_column_names_file_and_line(tmp_path, write):
    write("people.csv", PEOPLE.replace("age,", "agee,", 1))
    write("links.csv", LINKS)
    spec = spec_for(tmp_path)
    with pytest.raises(InputError) as info:
        pull(spec, open_source(spec))
    text = info.value.one_line()
    assert "people.csv:1" in text and "missing column 'age'" in text
    assert not spec.output.snapshot.exists()


def test_empty_id_names_the_line(tmp_path, write):
    write("people.csv", PEOPLE + ",person,1,1,,\n")
    write("links.csv", LINKS)
    spec = spec_for(tmp_path)
    # Row 4 starts on physical line 6: the header, two rows, and a row whose quoted note
    # spans lines 4 and 5 come before it.
    with pytest.raises(InputError, match=r"people.csv:6: column 'ref' is empty in data row 4"):
        pull(spec, open_source(spec))


def test_unreadable_file_is_a_source_error(tmp_path, write):
    write("links.csv", LINKS)
    spec = spec_for(tmp_path)
    with pytest.raises(SourceUnavailableError, match=r"people\.csv: file not found"):
        pull(spec, open_source(spec))


def test_ambiguous_relation_reference_is_refused(tmp_path):
    doc = {
        "spec_version": 1,
        "source": {
            "kind": "table-files",
            "vertex_files": [{"path": "v.csv", "id_column": "id", "type": "a"}],
            "edge_files": [
                {"path": "e.csv", "source_column": "s", "target_column": "t", "relation": "r"}
            ],
        },
        "vertex_types": {"a": {}, "b": {}},
        "relations": [{"from": "a", "name": "r", "to": "a"}, {"from": "a", "name": "r", "to": "b"}],
        "output": {"bundle": "x"},
    }
    with pytest.raises(SpecError, match="several relations named 'r'"):
        open_source(spec_from_dict(doc, base_dir=tmp_path))
    doc["source"]["edge_files"][0]["relation"] = "a.r.b"
    assert open_source(spec_from_dict(doc, base_dir=tmp_path)) is not None
