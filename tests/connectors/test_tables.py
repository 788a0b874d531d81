"""The table-files source: CSV and Parquet dumps with declared column roles."""

from __future__ import annotations

import dataclasses
import datetime as dt

import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

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
    # ill-typed under the declared kind: counted as such, its text kept beside the table
    assert snap.value_kinds("vertices", "person")["joined"] == {"datetime": 1, "ill-typed": 1}
    assert snap.ill_typed("vertices", "person").to_pylist() == [
        {"vertex_id": "p1", "property": "joined", "raw": "2020-01-02"}
    ]
    assert snap.vertices("company").column("note").to_pylist() == ["multi\nline"]
    works = snap.edges(RelationKey("person", "works_at", "company"))
    assert works.column("source_id").to_pylist() == ["p1", "p2"]
    assert works.column("since").to_pylist() == [None, 2019]
    assert snap.value_kinds("edges", "person.works_at.company")["since"] == {
        "integer": 1,
        "ill-typed": 1,
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


# --- typing that cannot crash -------------------------------------------------------------


def people_spec(tmp_path, props: dict, people: str = "people.csv"):
    """Only vertices of one type, read from ``people`` (column ``kind`` selects the type)."""
    return spec_from_dict(
        {
            "spec_version": 1,
            "source": {
                "kind": "table-files",
                "vertex_files": [{"path": people, "id_column": "ref", "type_column": "kind"}],
            },
            "vertex_types": {"person": {"properties": props}},
            "relations": [],
            "output": {"bundle": "out/b"},
        },
        base_dir=tmp_path,
    )


def _pull_people(tmp_path, write, text: str, props: dict, *, data: bytes | None = None):
    if data is not None:
        (tmp_path / "people.csv").write_bytes(data)
    else:
        write("people.csv", text)
    spec = people_spec(tmp_path, props)
    pull(spec, open_source(spec))
    snap = Snapshot.open(spec.output.snapshot)
    return snap.vertices("person"), snap.value_kinds("vertices", "person")


def test_integers_follow_the_xsd_lexical_space_and_int64(tmp_path, write):
    # xsd:integer allows a leading '+' (XML Schema Part 2, 3.3.13); int64 runs from -2**63 to
    # 2**63 - 1: the minimum is valid, one past either end is ill-typed (null and counted).
    people, kinds = _pull_people(
        tmp_path,
        write,
        "ref,kind,n\n"
        "a,person,+7\n"
        "b,person,-9223372036854775808\n"
        "c,person,9223372036854775807\n"
        "d,person,9223372036854775808\n"
        "e,person,-9223372036854775809\n"
        "f,person,-0009223372036854775808\n"
        "g,person,123456789012345678901234567890\n"
        "h,person,seven\n",
        {"n": {"kind": "integer"}},
    )
    assert people.column("n").to_pylist() == [
        7,
        -(2**63),
        2**63 - 1,
        None,
        None,
        -(2**63),
        None,
        None,
    ]
    # the gate: under a declared kind, text of another kind ("seven") is ill-typed too
    assert kinds["n"] == {"ill-typed": 4, "integer": 4}


def test_a_declared_date_format_reads_dates_and_datetimes(tmp_path, write):
    people, kinds = _pull_people(
        tmp_path,
        write,
        "ref,kind,day,at,zoned\n"
        "a,person,03/04/2021,03/04/2021 10:30,03/04/2021 10:30 +0200\n"
        "b,person,31/02/2021,2021-04-03T10:30:00,x\n"  # no 31 February; ISO is not the format
        "c,person,,,\n",
        {
            "day": {"kind": "date", "date_format": "%d/%m/%Y"},
            "at": {"kind": "datetime", "date_format": "%d/%m/%Y %H:%M"},
            "zoned": {"kind": "datetime", "date_format": "%d/%m/%Y %H:%M %z"},
        },
    )
    assert people.column("day").to_pylist() == [dt.date(2021, 4, 3), None, None]
    assert people.column("at").to_pylist() == [
        dt.datetime(2021, 4, 3, 10, 30, tzinfo=dt.UTC),  # no zone in the format: UTC
        None,
        None,
    ]
    assert people.column("zoned").to_pylist() == [
        dt.datetime(2021, 4, 3, 8, 30, tzinfo=dt.UTC),
        None,
        None,
    ]
    assert kinds["day"] == {"date": 1, "ill-typed": 1}
    assert kinds["at"] == {"datetime": 1, "ill-typed": 1}


def test_iso_dates_that_do_not_exist_are_ill_typed(tmp_path, write):
    people, kinds = _pull_people(
        tmp_path,
        write,
        "ref,kind,day,at\n"
        "a,person,2021-02-29,2021-02-29T00:00:00Z\n"  # 2021 is not a leap year
        "b,person,2020-02-29,2020-02-29T23:59:59.25-01:00\n"
        "c,person,2021-13-01,2021-01-01T24:00:00Z\n",
        {"day": {"kind": "date"}, "at": {"kind": "datetime"}},
    )
    assert people.column("day").to_pylist() == [None, dt.date(2020, 2, 29), None]
    assert people.column("at").to_pylist() == [
        None,
        dt.datetime(2020, 3, 1, 0, 59, 59, 250000, tzinfo=dt.UTC),
        None,
    ]
    assert kinds["day"] == {"date": 1, "ill-typed": 2}
    assert kinds["at"] == {"datetime": 1, "ill-typed": 2}


def test_a_byte_order_mark_is_not_part_of_the_first_column(tmp_path, write):
    people, _ = _pull_people(
        tmp_path,
        write,
        "",
        {"n": {"kind": "integer"}},
        data=b"\xef\xbb\xbfref,kind,n\na,person,1\n",
    )
    assert people.column("vertex_id").to_pylist() == ["a"]


@pytest.mark.parametrize(
    ("data", "line", "says"),
    [
        (b"ref,kind,n\na,person,1\nb,person,2,3\n", 3, "the row has 4 cells, the header has 3"),
        (b'ref,kind,n\na,person,"1\n\nb,person,2\n', 2, "not closed"),
        (b'ref,kind,n\na,person,"x\ny"\nb,person,\xff\n', 4, "in column 'n') is not UTF-8"),
        (b"ref,kind,n,n\na,person,1,2\n", 1, "column 'n' appears 2 times"),
    ],
)
def test_csv_defects_name_the_physical_line(tmp_path, write, data, line, says):
    with pytest.raises(InputError) as info:
        _pull_people(tmp_path, write, "", {"n": {"kind": "integer"}}, data=data)
    assert f"people.csv:{line}:" in str(info.value) and says in str(info.value)


def test_an_empty_file_is_called_empty(tmp_path, write):
    with pytest.raises(InputError, match=r"people\.csv: the file is empty"):
        _pull_people(tmp_path, write, "", {"n": None}, data=b"")


def test_parquet_column_types_are_normalised(tmp_path, write):
    table = pa.table(
        {
            "ref": pa.array([1, 2, 3]),  # integer IDs become text
            "kind": pa.array(["person"] * 3).dictionary_encode(),
            "small": pa.array([1, 2, None], pa.int8()),
            "huge": pa.array([1, 2**64 - 1, None], pa.uint64()),
            "money": pa.array([1, 2, 3], pa.decimal128(5, 0)),
            "seen": pa.array([0, 1, 2], pa.timestamp("ns", tz="Europe/Paris")),
            "day": pa.array([0, 1, 2], pa.date64()),
            "tags": pa.array([["x"], [], None], pa.large_list(pa.large_string())),
            "code": pa.array(["a", "b", "a"]).dictionary_encode(),
        }
    )
    pq.write_table(table, tmp_path / "people.parquet")
    props = dict.fromkeys(["small", "huge", "money", "seen", "day", "code"])
    spec = people_spec(tmp_path, {**props, "tags": {"multi": True}}, "people.parquet")
    pull(spec, open_source(spec))
    snap = Snapshot.open(spec.output.snapshot)
    people = snap.vertices("person")
    schema = people.schema
    assert people.column("vertex_id").to_pylist() == ["1", "2", "3"]
    assert schema.field("small").type == pa.int64()
    assert people.column("huge").to_pylist() == [1, None, None]
    assert snap.value_kinds("vertices", "person")["huge"] == {"ill-typed": 1, "integer": 1}
    assert schema.field("money").type == pa.float64()
    assert schema.field("seen").type == pa.timestamp("us", tz="UTC")
    assert schema.field("day").type == pa.date32()
    assert people.column("tags").to_pylist() == [["x"], [], None]
    assert people.column("code").to_pylist() == ["a", "b", "a"]


def test_of_two_rows_with_one_id_the_bundle_keeps_the_first_in_snapshot_order(tmp_path, write):
    """The README's rule: rows sort by ID, then by the declared properties in declaration
    order (ascending, missing last); the build keeps the first row of each ID."""
    from graphmill.transform import build_bundle

    write(
        "people.csv",
        "ref,kind,n,note\na,person,30,late\na,person,25,early\nb,person,,x\nb,person,7,y\n",
    )
    spec = people_spec(tmp_path, {"n": {"kind": "integer"}, "note": None})
    pull(spec, open_source(spec))
    build_bundle(spec, Snapshot.open(spec.output.snapshot))
    kept = pq.read_table(spec.output.bundle / "tables/vertices/person.parquet")
    assert kept.column("vertex_id").to_pylist() == ["a", "b"]
    assert kept.column("n").to_pylist() == [25, 7]


GOOD_CSV = (
    b"ref,kind,n,x,day\n"
    b"a,person,1,1.5,2020-01-02\n"
    b'b,person,+2,"q,\n""r""",2021-02-28\n'
    b"c,person,-3,,2020-02-29\n"
)
NOISE = [b'"', b",", b"\n", b"\r\n", b"\r", b"\xff", b"\xef\xbb\xbf", b"", b"+", b"9" * 25, b"\x00"]


@settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    st.lists(st.tuples(st.integers(0, len(GOOD_CSV)), st.sampled_from(NOISE), st.integers(0, 3)))
)
def test_damaged_csv_gives_a_snapshot_or_one_input_error(tmp_path_factory, edits):
    """Bytes spliced anywhere into a good file: a snapshot, or an InputError with the file
    (and a line when it is about a line); never another exception."""
    data = GOOD_CSV
    for at, noise, cut in edits:
        data = data[:at] + noise + data[at + cut :]
    root = tmp_path_factory.mktemp("fuzz")
    (root / "people.csv").write_bytes(data)
    spec = people_spec(
        root, {"n": {"kind": "integer"}, "x": {"kind": "float"}, "day": {"kind": "date"}}
    )
    try:
        pull(spec, open_source(spec))
    except InputError as error:
        assert error.file is not None and str(root / "people.csv") in str(error)
        assert "\n" not in str(error)
        assert not spec.output.snapshot.exists()


def test_a_header_broken_by_a_quote_and_carriage_return_is_an_input_error(tmp_path):
    # found by the test above: text after a closing quote, then a lone CR (Python's csv
    # reader refused it with an error of its own)
    (tmp_path / "people.csv").write_bytes(b'"ref,kind,n"a,b\r"\nc\n')
    spec = people_spec(tmp_path, {"n": None})
    with pytest.raises(InputError, match=r"people\.csv:1: "):
        pull(spec, open_source(spec))
