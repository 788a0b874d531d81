"""Differential tests: rule counts against networkx and scipy on random directed multigraphs.

Graphs have string IDs (some non-ASCII, one empty), repeated edges, self-loops, and
endpoints that are not declared vertices. The pure rule functions are checked on many
graphs; the whole runner, through a published snapshot, on fewer.
"""

from __future__ import annotations

from pathlib import Path

import networkx as nx
import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pytest
import scipy.sparse as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from graphmill.validate import run_checks
from graphmill.validate.rules import (
    dangling_mask,
    duplicate_counts,
    exact_repeats,
    isolated_mask,
    pair_codes,
    reciprocated_mask,
    reciprocity_counts,
    self_loop_mask,
)
from tests.validate._graphs import publish

POOL = [f"v{i}" for i in range(10)] + ["é", "中文", "a b", "<x>", ""]
ids = st.sampled_from(POOL)
vertex_lists = st.lists(ids, max_size=12, unique=True)
edge_lists = st.lists(st.tuples(ids, ids), max_size=40)


def _columns(edges: list[tuple[str, str]]) -> tuple[pa.Array, pa.Array]:
    return pa.array([u for u, _ in edges], pa.string()), pa.array(
        [v for _, v in edges], pa.string()
    )


def _one_way_scipy(edges: list[tuple[str, str]]) -> tuple[int, int]:
    """(edge rows, distinct pairs) whose reverse is missing: the pattern of P - P.T > 0,
    with P the 0/1 adjacency pattern and A the multiplicity matrix."""
    if not edges:
        return 0, 0
    index = {name: i for i, name in enumerate(sorted({x for e in edges for x in e}))}
    rows = np.array([index[u] for u, _ in edges])
    cols = np.array([index[v] for _, v in edges])
    n = len(index)
    counts = sp.coo_matrix((np.ones(len(edges)), (rows, cols)), shape=(n, n)).tocsr()
    pattern = (counts > 0).astype(np.int64)
    one_way = (pattern - pattern.T) > 0
    return int(counts.multiply(one_way).sum()), int(one_way.nnz)


def _isolated_nx(vertices: list[str], edges: list[tuple[str, str]]) -> set[str]:
    graph = nx.MultiDiGraph()
    graph.add_nodes_from(vertices)
    graph.add_edges_from(edges)
    return set(nx.isolates(graph)) & set(vertices)


@settings(max_examples=300, deadline=None)
@given(vertex_lists, edge_lists)
def test_pure_rules_match_networkx_and_scipy(vertices, edges):
    sources, targets = _columns(edges)
    declared = nx.DiGraph()
    declared.add_nodes_from(vertices)
    vertex_ids = pa.array(vertices, pa.string())

    dangling = pc.or_(dangling_mask(sources, vertex_ids), dangling_mask(targets, vertex_ids))
    expected = sum(1 for u, v in edges if not (declared.has_node(u) and declared.has_node(v)))
    assert (pc.sum(dangling).as_py() or 0) == expected

    multi = nx.MultiDiGraph(edges)
    assert (pc.sum(self_loop_mask(sources, targets)).as_py() or 0) == nx.number_of_selfloops(multi)

    repeats = exact_repeats(pa.table({"source_id": sources, "target_id": targets}))
    extra = (pc.sum(repeats.column("copies")).as_py() or 0) - repeats.num_rows
    assert extra == multi.number_of_edges() - nx.DiGraph(edges).number_of_edges()

    back, pairs = reciprocity_counts(sources, targets)
    if edges:
        assert back / pairs == nx.overall_reciprocity(nx.DiGraph(edges))
    else:
        assert (back, pairs) == (0, 0)

    one_way = pc.invert(reciprocated_mask(sources, targets))
    one_way_pairs = {(u, v) for (u, v), bad in zip(edges, one_way.to_pylist(), strict=True) if bad}
    assert (pc.sum(one_way).as_py() or 0, len(one_way_pairs)) == _one_way_scipy(edges)

    endpoints = [sources, targets]
    isolated = vertex_ids.filter(isolated_mask(vertex_ids, endpoints))
    assert set(isolated.to_pylist()) == _isolated_nx(vertices, edges)

    # The coded paths the runner takes give the same masks as the plain ones.
    codes = pair_codes(sources, targets)
    for column, side in ((sources, "source"), (targets, "target")):
        coded = dangling_mask(column, vertex_ids, coded=(codes, side))
        assert coded.equals(dangling_mask(column, vertex_ids))
    coded_sides = [(codes, "source"), (codes, "target")]
    assert isolated_mask(vertex_ids, endpoints, coded=coded_sides).equals(
        isolated_mask(vertex_ids, endpoints)
    )
    assert isolated_mask(vertex_ids, [sources], coded=coded_sides[:1]).equals(
        isolated_mask(vertex_ids, [sources])
    )


@settings(max_examples=200, deadline=None)
@given(st.lists(ids, max_size=30))
def test_duplicate_counts_match_networkx_node_set(rows):
    graph = nx.Graph()
    graph.add_nodes_from(rows)
    dups = duplicate_counts(pa.array(rows, pa.string()))
    extra = (pc.sum(dups.column("copies")).as_py() or 0) - dups.num_rows
    assert extra == len(rows) - graph.number_of_nodes()


@pytest.fixture(scope="module")
def scratch(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return tmp_path_factory.mktemp("validate-nx")


@settings(
    max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    vertices=vertex_lists,
    extra_rows=st.lists(ids, max_size=4),
    edges=edge_lists,
    undirected=st.booleans(),
)
def test_runner_counts_match_networkx(scratch, vertices, extra_rows, edges, undirected):
    """The runner, through a real published snapshot, reports the networkx/scipy counts."""
    rows = vertices + extra_rows  # extra_rows may repeat ids: duplicate vertices
    spec, snapshot = publish(
        Path(scratch) / f"g{len(list(Path(scratch).iterdir()))}",
        vertex_types={"node": {}},
        relations=[{"from": "node", "name": "link", "to": "node", "undirected": undirected}],
        vertices={"node": {"vertex_id": pa.array(rows, pa.string())}},
        edges={
            "node.link.node": dict(zip(("source_id", "target_id"), _columns(edges), strict=True))
        },
    )
    report = run_checks(spec, snapshot)
    counts = {f.rule: f for f in report.findings}

    def count(rule: str) -> int:
        return counts[rule].count if rule in counts else 0

    unique = set(rows)
    assert count("dangling-edge") == sum(1 for u, v in edges if u not in unique or v not in unique)
    assert count("duplicate-vertex-id") == len(rows) - len(unique)
    multi = nx.MultiDiGraph(edges)
    assert count("self-loop") == nx.number_of_selfloops(multi)
    assert count("repeated-edge") == multi.number_of_edges() - nx.DiGraph(edges).number_of_edges()
    assert count("isolated-vertex") == len(_isolated_nx(sorted(unique), edges))
    reciprocity = counts["reciprocity"].details["reciprocity"]
    if edges:
        assert reciprocity == nx.overall_reciprocity(nx.DiGraph(edges))
    else:
        assert reciprocity is None
    if undirected:
        one_way_rows, one_way_pairs = _one_way_scipy(edges)
        assert count("one-way-edge") == one_way_rows
        if one_way_rows:
            assert counts["one-way-edge"].details["pairs"] == one_way_pairs
    else:
        assert "one-way-edge" not in {e.rule for e in report.evaluated}
