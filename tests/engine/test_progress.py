"""Progress in rows: every stage's tasks advance by the rows they went through, on every
engine, with the snapshot's row counts (``snapshot.json``) as totals.

The graph is networkx's karate club (Zachary 1977: 34 members, 78 friendships) written as
CSV, with defects planted so that the build drops, merges and adds edges (the rows a task
counts are the rows that went *in*): two dangling edges, a repeated edge, and a second
vertex type and relation. The progress object is a real one that records what it is told.
"""

from __future__ import annotations

import csv
import json
import threading
from pathlib import Path

import networkx as nx
import pyarrow.parquet as pq
import pytest

from graphmill.pipeline import Pipeline
from graphmill.spec import EngineSpec, spec_from_dict


class RecordedTask:
    """A progress task that adds up what it is told (thread-safe: pulls may use threads)."""

    def __init__(self, description: str, total: int | None) -> None:
        self.description, self.total, self.done = description, total, 0
        self._lock = threading.Lock()

    def advance(self, amount: int = 1) -> None:
        with self._lock:
            self.done += amount

    def describe(self, description: str) -> None:
        self.description = description


class RecordingProgress:
    """Implements :class:`graphmill._progress.Progress`; keeps every task it handed out."""

    def __init__(self) -> None:
        self.tasks: list[RecordedTask] = []
        self._lock = threading.Lock()

    def task(self, description: str, total: int | None = None) -> RecordedTask:
        with self._lock:
            self.tasks.append(RecordedTask(description, total))
            return self.tasks[-1]

    def named(self, description: str) -> RecordedTask:
        (found,) = [t for t in self.tasks if t.description == description]
        return found


def _karate_files(folder: Path) -> dict[str, object]:
    graph = nx.karate_club_graph()  # Zachary (1977): 34 members, 78 friendships (networkx)
    folder.mkdir()
    with open(folder / "people.csv", "w", newline="", encoding="utf-8") as fh:
        out = csv.writer(fh)
        out.writerow(["id", "seat"])
        out.writerows([f"p{v:02d}", v] for v in graph.nodes)
    edges = [(f"p{u:02d}", f"p{v:02d}") for u, v in graph.edges]
    edges += [("p00", "ghost"), ("nobody", "p01"), edges[0]]  # 2 dangling, 1 repeated
    with open(folder / "meets.csv", "w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows([("a", "b"), *edges])
    with open(folder / "clubs.csv", "w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows([("id",), ("Mr. Hi",), ("Officer",)])
    with open(folder / "joins.csv", "w", newline="", encoding="utf-8") as fh:
        joined = [(f"p{v:02d}", graph.nodes[v]["club"]) for v in graph.nodes]
        csv.writer(fh).writerows([("who", "club"), *joined])
    return {
        "kind": "table-files",
        "vertex_files": [
            {"path": "dump/people.csv", "id_column": "id", "type": "person"},
            {"path": "dump/clubs.csv", "id_column": "id", "type": "club"},
        ],
        "edge_files": [
            {"path": "dump/meets.csv", "source_column": "a", "target_column": "b",
             "relation": "meets"},
            {"path": "dump/joins.csv", "source_column": "who", "target_column": "club",
             "relation": "joins"},
        ],
    }  # fmt: skip


@pytest.fixture(params=["reference", "local", "spark"])
def engine(request: pytest.FixtureRequest) -> EngineSpec:
    if request.param == "spark":
        spark: EngineSpec = request.getfixturevalue("spark_cluster")
        return spark
    return EngineSpec(kind=request.param, threads=2)


def test_every_stage_advances_by_the_snapshot_rows(tmp_path: Path, engine: EngineSpec) -> None:
    document = {
        "spec_version": 1,
        "name": "karate",
        "source": _karate_files(tmp_path / "dump"),
        "vertex_types": {"person": {"properties": {"seat": {"kind": "integer"}}}, "club": {}},
        "relations": [
            {"from": "person", "name": "meets", "to": "person", "undirected": True},
            {"from": "person", "name": "joins", "to": "club"},
        ],
        "edges": {"duplicates": "drop"},
        "features": {"person": [{"property": "seat", "encoding": "standardize"}]},
        "checks": {"severity": {"dangling-edge": "warning"}},
        "output": {"bundle": "out/bundle"},
    }
    spec = spec_from_dict(document, base_dir=tmp_path)
    spec = spec.__class__(**{**spec.__dict__, "engine": engine})
    progress = RecordingProgress()
    result = Pipeline(spec, progress=progress).run()
    assert result.build is not None

    snapshot = json.loads((spec.output.snapshot / "snapshot.json").read_text("utf-8"))
    rows = {(t["kind"], t["name"]): t["rows"] for t in snapshot["tables"]}
    vertex_rows = sum(n for (kind, _), n in rows.items() if kind == "vertices")
    edge_rows = sum(n for (kind, _), n in rows.items() if kind == "edges")
    assert (vertex_rows, edge_rows) == (34 + 2, 78 + 3 + 34)  # what was planted above

    for (kind, name), n in rows.items():  # pull: the merge of each table
        merged = progress.named(f"merge {kind} {name}")
        assert (merged.total, merged.done) == (n, n)
    staged = sum(t.done for t in progress.tasks if t.description.startswith("pull "))
    assert staged == vertex_rows + edge_rows

    checks = {t.description: t for t in progress.tasks if t.description.startswith("check ")}
    assert all(t.done == t.total for t in checks.values())
    assert checks["check dangling-edge"].total == edge_rows  # every relation's edges
    assert checks["check repeated-edge"].total == edge_rows
    assert checks["check self-loop"].total == rows[("edges", "person.meets.person")]
    assert checks["check one-way-edge"].total == rows[("edges", "person.meets.person")]
    assert checks["check isolated-vertex"].total == vertex_rows
    assert checks["check duplicate-vertex-id"].total == vertex_rows

    for name, total in [
        ("index vertices", vertex_rows),
        ("encode vertices", vertex_rows),
        ("map edges", edge_rows),
        ("police edges", edge_rows),
    ]:
        task = progress.named(name)
        assert (task.total, task.done) == (total, total), name

    tables = sorted(spec.output.bundle.rglob("*.parquet"))  # what the bundle holds
    bundle_rows = sum(pq.read_metadata(path).num_rows for path in tables)
    written = progress.named("write tables")
    assert (written.total, written.done) == (bundle_rows, bundle_rows)
