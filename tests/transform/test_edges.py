"""Edge policies against plain-Python references, networkx and scipy.sparse."""

from __future__ import annotations

from collections import Counter

import networkx as nx
import numpy as np
import scipy.sparse as sp
from hypothesis import given, settings
from hypothesis import strategies as st

from graphmill.transform._edges import EdgeArrays, add_missing_reverses, apply_edge_policy

N = 6
endpoint = st.integers(min_value=-1, max_value=N - 1)  # -1: not a vertex
edge_lists = st.lists(st.tuples(endpoint, endpoint), max_size=40)


def run(pairs: list[tuple[int, int]], **options: object) -> tuple[list[tuple[int, int]], object]:
    source = np.array([p[0] for p in pairs], dtype=np.int64)
    target = np.array([p[1] for p in pairs], dtype=np.int64)
    settings_ = {
        "same_type": True,
        "vertex_count": N,
        "duplicates": "keep",
        "self_loops": "keep",
        "symmetrize": False,
    }
    settings_.update(options)
    outcome = apply_edge_policy(source, target, **settings_)  # type: ignore[arg-type]
    edges = outcome.edges
    return list(zip(edges.source.tolist(), edges.target.tolist(), strict=True)), outcome


@given(edge_lists)
@settings(max_examples=80, deadline=None)
def test_keep_returns_the_valid_multiset_sorted(pairs: list[tuple[int, int]]) -> None:
    valid = [p for p in pairs if p[0] >= 0 and p[1] >= 0]
    out, outcome = run(pairs)
    assert out == sorted(valid)
    assert sum(outcome.dropped.values()) == len(pairs) - len(valid)
    assert outcome.dropped["dangling-both"] == sum(p == (-1, -1) for p in pairs)
    assert outcome.dropped["dangling-source"] == sum(p[0] < 0 <= p[1] for p in pairs)
    assert outcome.dropped["dangling-target"] == sum(p[1] < 0 <= p[0] for p in pairs)


@given(edge_lists)
@settings(max_examples=80, deadline=None)
def test_drop_and_merge_against_counter(pairs: list[tuple[int, int]]) -> None:
    counts = Counter(p for p in pairs if p[0] >= 0 and p[1] >= 0)
    dropped, d_outcome = run(pairs, duplicates="drop")
    assert dropped == sorted(counts)
    assert d_outcome.dropped["repeated-edge"] == sum(counts.values()) - len(counts)
    merged, m_outcome = run(pairs, duplicates="merge")
    assert merged == sorted(counts)
    assert m_outcome.edges.multiplicity.tolist() == [counts[p] for p in sorted(counts)]
    assert m_outcome.merged == sum(counts.values()) - len(counts)


@given(edge_lists)
@settings(max_examples=80, deadline=None)
def test_self_loops_dropped_only_within_one_vertex_type(pairs: list[tuple[int, int]]) -> None:
    out, outcome = run(pairs, self_loops="drop")
    assert all(s != t for s, t in out)
    assert outcome.dropped["self-loop"] == sum(s == t and s >= 0 for s, t in pairs)
    across, _ = run(pairs, self_loops="drop", same_type=False)
    assert across == sorted(p for p in pairs if p[0] >= 0 and p[1] >= 0)


@given(edge_lists)
@settings(max_examples=80, deadline=None)
def test_symmetrize_gives_the_networkx_undirected_graph(pairs: list[tuple[int, int]]) -> None:
    valid = [p for p in pairs if p[0] >= 0 and p[1] >= 0]
    out, outcome = run(pairs, symmetrize=True, duplicates="drop")
    graph = nx.Graph(valid)  # an undirected simple graph: each {u, v} once
    expected = sorted({(u, v) for u, v in graph.edges} | {(v, u) for u, v in graph.edges})
    assert out == expected
    # The adjacency matrix is symmetric (scipy: A equals its transpose).
    matrix = sp.coo_array(
        (np.ones(len(out)), ([s for s, _ in out], [t for _, t in out])), shape=(N, N)
    ).tocsr()
    assert (matrix != matrix.T).nnz == 0
    assert outcome.added_reverses == sum(1 for s, t in valid if (t, s) not in set(valid))


def test_symmetrize_adds_one_reverse_per_copy_and_keeps_the_row() -> None:
    edges = EdgeArrays(np.array([0, 0, 1, 2]), np.array([1, 1, 0, 3]), np.array([10, 11, 12, 13]))
    combined, added = add_missing_reverses(edges, 4)
    # (0,1) has its reverse (1,0) already; only (2,3) is one-way.
    assert added == 1
    assert list(zip(combined.source, combined.target, combined.rows, strict=True))[-1] == (3, 2, 13)


def test_merge_keeps_the_first_copy_in_snapshot_order() -> None:
    out, outcome = run([(1, 2), (0, 1), (1, 2), (1, 2)], duplicates="merge")
    assert out == [(0, 1), (1, 2)]
    assert outcome.edges.rows.tolist() == [1, 0]
    assert outcome.edges.multiplicity.tolist() == [1, 3]


def test_reversed_swaps_and_resorts() -> None:
    edges = EdgeArrays(np.array([0, 1, 2]), np.array([2, 0, 1]), np.array([0, 1, 2]))
    flipped = edges.reversed()
    assert list(zip(flipped.source, flipped.target, strict=True)) == [(0, 1), (1, 2), (2, 0)]
    assert flipped.rows.tolist() == [1, 2, 0]
