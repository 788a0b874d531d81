"""Property tests of the edge-split blocks: keyed-hash parts and negatives."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from graphmill.transform._edge_splits import edge_parts, time_parts
from graphmill.transform._negatives import negatives_generator, pair_codes, sample_negatives

ids = st.text(st.characters(exclude_categories=("Cs",)), min_size=0, max_size=4)


@given(st.lists(st.tuples(ids, ids), max_size=30), st.integers(0, 2**32))
@settings(max_examples=60, deadline=None)
def test_parts_depend_on_the_edge_alone(edges: list[tuple[str, str]], seed: int) -> None:
    def parts(chosen: list[tuple[str, str]], undirected: bool) -> list[int]:
        return edge_parts(
            [s for s, _ in chosen],
            "r",
            [t for _, t in chosen],
            undirected=undirected,
            fractions=(0.6, 0.2, 0.2),
            seed=seed,
        ).tolist()

    whole = parts(edges, False)
    assert [parts([e], False)[0] for e in edges] == whole  # no other edge matters
    flipped = parts([(t, s) for s, t in edges], True)
    assert flipped == parts(edges, True)  # an undirected pair's two directions agree


@given(
    st.integers(1, 8),
    st.integers(2, 8),
    st.lists(st.tuples(st.integers(0, 7), st.integers(0, 7)), max_size=20),
    st.integers(1, 4),
    st.booleans(),
)
@settings(max_examples=80, deadline=None)
def test_negatives_are_never_known_edges(
    n_src: int, n_dst: int, raw: list[tuple[int, int]], k: int, by_degree: bool
) -> None:
    edges = [(s % n_src, t % n_dst) for s, t in raw]
    # keep each source at least one non-edge, as sample_negatives requires
    edges = [(s, t) for s, t in edges if t != (s % n_dst)]
    src = np.array([s for s, _ in edges], dtype=np.int64)
    dst = np.array([t for _, t in edges], dtype=np.int64)
    known = pair_codes(src, dst, n_dst)
    weights = np.ones(n_dst) if by_degree else None
    out = sample_negatives(
        src,
        known,
        target_count=n_dst,
        per_positive=k,
        weights=weights,
        rng=negatives_generator(3, "a.r.b", "test"),
        where="a.r.b",
    )
    assert out.shape == (2, k * len(edges))
    assert (out[0] == np.repeat(src, k)).all()
    assert not set(zip(out[0].tolist(), out[1].tolist(), strict=True)) & set(edges)
    assert ((out[1] >= 0) & (out[1] < n_dst)).all()
    again = sample_negatives(
        src,
        known,
        target_count=n_dst,
        per_positive=k,
        weights=weights,
        rng=negatives_generator(3, "a.r.b", "test"),
        where="a.r.b",
    )
    assert (again == out).all()  # seeded: equal inputs, equal negatives


@given(st.lists(st.one_of(st.none(), st.floats(0, 100)), max_size=30), st.floats(0, 100))
@settings(max_examples=60, deadline=None)
def test_time_parts_against_plain_comparisons(values: list[float | None], low: float) -> None:
    high = low + 10
    times = np.array([np.nan if v is None else v for v in values], dtype=np.float64)
    got = time_parts(times, low, high).tolist()
    want = [-1 if v is None else 0 if v < low else 1 if v < high else 2 for v in values]
    assert got == want
