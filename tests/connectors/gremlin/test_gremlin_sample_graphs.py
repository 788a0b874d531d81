"""TinkerPop's sample graphs, served by a real Gremlin Server, pulled into snapshots."""

from __future__ import annotations

import pyarrow as pa
import pytest
from gremlin_helpers import (
    DEAD_RELATIONS,
    DEAD_TYPES,
    MODERN_RELATIONS,
    MODERN_TYPES,
    gremlin_spec,
)

from graphmill.connectors import open_source
from graphmill.pipeline import Pipeline
from graphmill.snapshot import Snapshot, pull
from graphmill.spec import RelationKey

pytestmark = pytest.mark.servers


def _pull(spec):
    info = pull(spec, open_source(spec))
    return info, Snapshot.open(spec.output.snapshot)


def test_modern_graph_counts_types_and_values(gremlin_server, tmp_path):
    spec = gremlin_spec(
        tmp_path, gremlin_server.url, MODERN_TYPES, MODERN_RELATIONS, traversal_source="g_modern"
    )
    info, snap = _pull(spec)
    # TinkerPop reference documentation, toy graphs, "Modern": 6 vertices (4 person,
    # 2 software) and 6 edges (2 knows, 4 created)
    assert info.vertex_counts == {"person": 4, "software": 2}
    assert info.edge_counts == {"person.knows.person": 2, "person.created.software": 4}
    people = snap.vertices("person")
    assert people.schema.field("age").type == pa.int64()
    assert snap.vertices("software").schema.field("lang").type == pa.string()
    created = snap.edges(RelationKey("person", "created", "software"))
    assert created.schema.field("weight").type == pa.float64()
    # same page of the documentation: marko 29, vadas 27, josh 32, peter 35 (ids 1, 2, 4, 6);
    # lop and ripple are java software; marko knows vadas (0.5) and josh (1.0)
    assert people.to_pydict() == {
        "vertex_id": ["1", "2", "4", "6"],
        "name": ["marko", "vadas", "josh", "peter"],
        "age": [29, 27, 32, 35],
    }
    assert snap.vertices("software").column("lang").to_pylist() == ["java", "java"]
    knows = snap.edges(RelationKey("person", "knows", "person")).to_pydict()
    assert knows == {"source_id": ["1", "1"], "target_id": ["2", "4"], "weight": [0.5, 1.0]}
    assert snap.value_kinds("vertices", "person")["age"] == {"integer": 4}


def test_modern_graph_discovery_and_provenance(gremlin_server, tmp_path):
    spec = gremlin_spec(
        tmp_path, gremlin_server.url, MODERN_TYPES, MODERN_RELATIONS, traversal_source="g_modern"
    )
    _, snap = _pull(spec)
    found = snap.document["discovery"]
    labels = {entry["label"]: entry for entry in found["vertex_labels"]}
    assert {k: v["count"] for k, v in labels.items()} == {"person": 4, "software": 2}
    assert labels["person"]["properties"] == {"age": {"integer": 4}, "name": {"string": 4}}
    edges = {entry["label"]: entry for entry in found["edge_labels"]}
    assert edges["created"]["ends"] == [{"out": "person", "in": "software", "count": 4}]
    assert edges["knows"]["properties"] == {"weight": {"float": 2}}
    assert found["sample_size"] == 1000
    source = snap.provenance
    assert source["kind"] == "gremlin"
    assert source["location"] == f"{gremlin_server.url} traversal_source=g_modern"
    assert len(source["queries"]) == 4
    assert source["queries"][0].startswith("g_modern.V().hasLabel('person')")
    assert "__.values('age')" in source["queries"][0]


def test_grateful_dead_counts(gremlin_server, tmp_path):
    spec = gremlin_spec(
        tmp_path,
        gremlin_server.url,
        DEAD_TYPES,
        DEAD_RELATIONS,
        traversal_source="g_dead",
        page_size=500,
    )
    info, snap = _pull(spec)
    # TinkerPop documentation, Grateful Dead data set: 808 vertices, 8049 edges
    assert sum(info.vertex_counts.values()) == 808
    assert sum(info.edge_counts.values()) == 8049
    # per label, against the server's own count (a Groovy script, not our traversals)
    by_label = gremlin_server.submit("g_dead.V().groupCount().by(label)")[0]
    assert info.vertex_counts == {"song": by_label["song"], "artist": by_label["artist"]}
    songs = snap.vertices("song")
    assert songs.schema.field("performances").type == pa.int64()
    assert songs.schema.field("song_type").type == pa.string()
    assert info.pages_read > 16  # 8049 edges in pages of 500
    report = Pipeline(spec).check()
    assert report.passed, report.summary()
    built = Pipeline(spec).build(report=report)
    assert built.vertex_counts == info.vertex_counts


def test_partitions_and_page_sizes_give_identical_tables(gremlin_server, tmp_path):
    tables = []
    for n, options in enumerate(
        [{}, {"partitions": 3, "page_size": 333}, {"partitions": 2, "batch_size": 7}]
    ):
        spec = gremlin_spec(
            tmp_path / str(n),
            gremlin_server.url,
            DEAD_TYPES,
            DEAD_RELATIONS,
            traversal_source="g_dead",
            **options,
        )
        info, snap = _pull(spec)
        assert info.units_total == 5 * options.get("partitions", 1)
        tables.append({t["name"]: (t["rows"], t["sha256"]) for t in snap.document["tables"]})
        # partition bounds are element ids: described in provenance, never listed
        assert not any("gte(" in q or "lt(" in q for q in snap.provenance["queries"])
    assert tables[0] == tables[1] == tables[2]


def test_modern_graph_checks_and_builds(gremlin_server, tmp_path):
    spec = gremlin_spec(
        tmp_path, gremlin_server.url, MODERN_TYPES, MODERN_RELATIONS, traversal_source="g_modern"
    )
    result = Pipeline(spec).run()
    assert result.report.passed, result.report.summary()
    assert result.build is not None
    assert result.build.vertex_counts == {"person": 4, "software": 2}
    assert (spec.output.bundle / "manifest.json").is_file()


def test_partitions_read_without_planning_still_split_the_label(gremlin_server, tmp_path):
    from graphmill.connectors.base import WorkUnit

    spec = gremlin_spec(
        tmp_path, gremlin_server.url, DEAD_TYPES, DEAD_RELATIONS, traversal_source="g_dead"
    )
    with open_source(spec) as source:
        ids = [
            vid
            for part in range(3)
            for page in source.read(WorkUnit("vertices", "song", part, 3))
            for vid in page.batch.column("vertex_id").to_pylist()
        ]
    songs = gremlin_server.submit("g_dead.V().hasLabel('song').count()")[0]  # server's count
    assert len(ids) == len(set(ids)) == songs
