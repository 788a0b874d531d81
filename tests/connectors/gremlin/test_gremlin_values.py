"""Every value type GraphBinary carries, written by a Groovy script into a real server,
pulled through the gremlin source into typed snapshot columns."""

from __future__ import annotations

import datetime as dt
import json

import pyarrow as pa
import pytest
from gremlin_helpers import drop_labels, gremlin_spec

from graphmill.connectors import open_source
from graphmill.snapshot import Snapshot, pull

pytestmark = pytest.mark.servers
UTC = dt.UTC

# Java values by Groovy literal: 7 Integer, 3000000000L Long, (short)/(byte) casts, 42G
# BigInteger, 2.5G BigDecimal, 1.5f Float, 0.1d Double, 'c' as char Character.
TYPED = """
g.addV('gv_typed').property(T.id, 'gv1')
 .property('int_p', 7).property('long_p', 3000000000L).property('short_p', (short) 3)
 .property('byte_p', (byte) 4).property('bigint_p', 42G).property('float_p', 1.5f)
 .property('double_p', 0.1d).property('bigdec_p', 2.5G).property('bool_p', true)
 .property('str_p', 'text').property('char_p', 'c' as char)
 .property('uuid_p', UUID.fromString('123e4567-e89b-12d3-a456-426614174000'))
 .property('date_p', new Date(86400000L))
 .property('odt_p', java.time.OffsetDateTime.parse('2020-01-01T10:00:00+02:00'))
 .property('bytes_p', java.nio.ByteBuffer.wrap('abc'.bytes)).iterate()
"""
MIXED = """
g.addV('gv_mixed').property(T.id, 'm1').property('v', 1).iterate()
g.addV('gv_mixed').property(T.id, 'm2').property('v', 'two').iterate()
g.addV('gv_mixed').property(T.id, 'm3').property('v', 3.5d).iterate()
g.addV('gv_mixed').property(T.id, 'm4').property('v', true).iterate()
g.addV('gv_mixed').property(T.id, 'm5').iterate()
"""
BIG = """
g.addV('gv_big').property(T.id, 'b1').property('n', 12345678901234567890123G)
 .property('d', 0.1000000000000000000001G).iterate()
"""
MULTI = """
g.addV('gv_multi').property(T.id, 'x1').property(list, 'tags', 'b').property(list, 'tags', 'a')
 .property(list, 'tags', 'b').property('nums', [3, 1]).property(list, 'pair', 'q')
 .property(list, 'pair', 'p').iterate()
g.addV('gv_multi').property(T.id, 'x2').property(set, 'tags', 'z').property('pair', 'r').iterate()
g.addV('gv_multi').property(T.id, 'x3').iterate()
"""
META = """
g.addV('gv_meta').property(T.id, 'y1').property(list, 'loc', 'oslo', 'since', 2001)
 .property(list, 'loc', 'bergen', 'since', 2010, 'until', 2015).iterate()
g.addV('gv_meta').property(T.id, 'y2').property(list, 'loc', 'rome').iterate()
"""
PRIVATE = """
g.addV('gv_private').property(T.id, 'z1').property('name', 'ada')
 .property('secret', 'hunter2-do-not-copy').iterate()
"""
LABELS = ["gv_typed", "gv_mixed", "gv_big", "gv_multi", "gv_meta", "gv_private"]


@pytest.fixture(scope="module")
def server(gremlin_server):
    drop_labels(gremlin_server.url, LABELS)
    for script in (TYPED, MIXED, BIG, MULTI, META, PRIVATE):
        gremlin_server.submit(script)
    yield gremlin_server
    drop_labels(gremlin_server.url, LABELS)


def _vertices(server, folder, label, properties, **source):
    spec = gremlin_spec(
        folder, server.url, {"t": {"match": label, "properties": properties}}, [], **source
    )
    pull(spec, open_source(spec))
    snap = Snapshot.open(spec.output.snapshot)
    return snap, snap.vertices("t")


def test_each_graphbinary_type_lands_in_its_arrow_type(server, tmp_path):
    keys = [
        "int_p",
        "long_p",
        "short_p",
        "byte_p",
        "bigint_p",
        "float_p",
        "double_p",
        "bigdec_p",
        "bool_p",
        "str_p",
        "char_p",
        "uuid_p",
        "date_p",
        "odt_p",
        "bytes_p",
    ]
    _, table = _vertices(server, tmp_path, "gv_typed", {k: {} for k in keys})
    types = {k: table.schema.field(k).type for k in keys}
    assert types == {
        **dict.fromkeys(["int_p", "long_p", "short_p", "byte_p", "bigint_p"], pa.int64()),
        **dict.fromkeys(["float_p", "double_p", "bigdec_p"], pa.float64()),
        "bool_p": pa.bool_(),
        **dict.fromkeys(["str_p", "char_p", "uuid_p"], pa.string()),
        **dict.fromkeys(["date_p", "odt_p"], pa.timestamp("us", tz="UTC")),
        "bytes_p": pa.binary(),
    }
    row = table.to_pylist()[0]
    assert row["long_p"] == 3_000_000_000  # beyond Java int (JLS 4.2.1: int max 2147483647)
    assert row["float_p"] == 1.5  # exact in IEEE 754 binary32
    assert row["double_p"] == 0.1 and row["bigdec_p"] == 2.5
    assert row["uuid_p"] == "123e4567-e89b-12d3-a456-426614174000"
    # java.util.Date counts milliseconds since 1970-01-01T00:00Z: 86400000 ms is one day
    assert row["date_p"] == dt.datetime(1970, 1, 2, tzinfo=UTC)
    # ISO 8601: 10:00 at offset +02:00 is 08:00 UTC
    assert row["odt_p"] == dt.datetime(2020, 1, 1, 8, 0, tzinfo=UTC)
    assert row["bytes_p"] == b"abc" and row["char_p"] == "c"


@pytest.mark.parametrize("page_size", [1, 2, 100])
def test_mixed_kinds_become_text_with_a_kind_profile(server, tmp_path, page_size):
    snap, table = _vertices(server, tmp_path, "gv_mixed", {"v": {}}, page_size=page_size)
    assert table.schema.field("v").type == pa.string()
    # lexical forms as the snapshot's conform() prints them (pyarrow casts to string)
    assert table.column("v").to_pylist() == ["1", "two", "3.5", "true", None]
    assert snap.value_kinds("vertices", "t")["v"] == {
        "boolean": 1,
        "float": 1,
        "integer": 1,
        "string": 1,
    }


def test_mixed_kinds_give_the_same_file_whatever_the_paging(server, tmp_path):
    digests = set()
    for page_size in (1, 3, 100):
        snap, _ = _vertices(
            server, tmp_path / str(page_size), "gv_mixed", {"v": {}}, page_size=page_size
        )
        digests.add(snap.document["tables"][0]["sha256"])
    assert len(digests) == 1


def test_numbers_beyond_int64_and_double_keep_their_digits(server, tmp_path):
    snap, table = _vertices(server, tmp_path, "gv_big", {"n": {}, "d": {}})
    row = table.to_pylist()[0]
    # int64 holds at most 9223372036854775807 (JLS 4.2.1, long); this BigInteger is larger
    assert row["n"] == "12345678901234567890123"
    # a double has about 15-17 significant decimal digits (IEEE 754 binary64): not these 22
    assert row["d"] == "0.1000000000000000000001"
    kinds = snap.value_kinds("vertices", "t")
    assert kinds["n"] == {"integer": 1} and kinds["d"] == {"float": 1}


def test_list_and_set_cardinality_become_sorted_lists(server, tmp_path):
    properties = {"tags": {"multi": True}, "nums": {"multi": True}, "pair": {}}
    _, table = _vertices(server, tmp_path, "gv_multi", properties)
    assert table.schema.field("tags").type == pa.list_(pa.string())
    assert table.to_pydict() == {
        "vertex_id": ["x1", "x2", "x3"],
        "tags": [["a", "b", "b"], ["z"], None],  # list cardinality keeps the repeat
        "nums": [[1, 3], None, None],  # a Java List value counts as several values
        "pair": [["p", "q"], ["r"], None],  # several values although not declared multi
    }


def test_meta_properties_kept_as_json_when_asked(server, tmp_path):
    properties = {"loc": {"multi": True}, "loc__meta": {}}
    snap, table = _vertices(server, tmp_path, "gv_meta", properties, meta_properties="keep")
    rows = table.to_pylist()
    assert rows[0]["loc"] == ["bergen", "oslo"]
    assert json.loads(rows[0]["loc__meta"]) == [
        {"meta": {"since": 2010, "until": 2015}, "value": "bergen"},
        {"meta": {"since": 2001}, "value": "oslo"},
    ]
    assert json.loads(rows[1]["loc__meta"]) == [{"meta": {}, "value": "rome"}]
    assert "properties('loc')" in snap.provenance["queries"][0]


def test_meta_properties_dropped_by_default(server, tmp_path):
    snap, table = _vertices(server, tmp_path, "gv_meta", {"loc": {"multi": True}})
    assert table.column_names == ["vertex_id", "loc"]
    assert "properties(" not in snap.provenance["queries"][0]


def test_only_declared_properties_are_read(server, tmp_path):
    snap, table = _vertices(server, tmp_path, "gv_private", {"name": {}})
    assert table.to_pylist() == [{"vertex_id": "z1", "name": "ada"}]
    queries = " ".join(snap.provenance["queries"])
    assert "secret" not in queries and "valueMap()" not in queries
    text = (snap.root / "snapshot.json").read_text()
    assert "hunter2-do-not-copy" not in text
