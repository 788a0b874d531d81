"""Train / validation / test parts for the labelled vertex type.

Contract: the candidates are the vertices with a label (``only_labeled``) or all vertices,
taken in index order; the result depends only on that order (that is, on the sorted IDs) and
the seed. A ``numpy.random.Generator(PCG64(seed))`` draws one permutation of the candidates;
within each stratum (a class for ``stratified``, with the unlabeled as one more stratum when
they take part; everything for ``random``) the candidates in permuted order fill train, then
validation, then test.

Rounding rule (largest remainder): a stratum of ``n`` gets ``floor(n * f)`` per part; the
vertices left over go one each to the parts with the largest fractional remainders (ties:
train, validation, test). Each part is then within one vertex of ``n * f``. If a non-empty
stratum would get no train vertex, one moves to train from the larger of validation and test
(ties: test), so every class present has at least one training vertex.
"""

from __future__ import annotations

import numpy as np

from graphmill.transform._labels import UNLABELED

PARTS = ("train", "validation", "test")
NO_PART = -1


def part_sizes(counts: np.ndarray, fractions: tuple[float, float, float]) -> np.ndarray:
    """Sizes [strata, 3] by the largest-remainder rule, each row summing to its count.

    >>> part_sizes(np.array([10, 3]), (0.7, 0.15, 0.15)).tolist()
    [[7, 2, 1], [2, 1, 0]]
    """
    counts = np.asarray(counts, dtype=np.int64)
    exact = np.round(counts[:, None] * np.asarray(fractions, dtype=np.float64)[None, :], 9)
    sizes = np.floor(exact).astype(np.int64)
    left = counts - sizes.sum(axis=1)
    # Rank parts by remainder, largest first; a stable sort keeps train < validation < test.
    order = np.argsort(-(exact - sizes), axis=1, kind="stable")
    rank = np.empty_like(order)
    np.put_along_axis(rank, order, np.arange(len(fractions))[None, :], axis=1)
    sizes += rank < left[:, None]
    return sizes


def ensure_train(sizes: np.ndarray) -> np.ndarray:
    """Give every non-empty stratum without a train vertex one, from validation or test."""
    sizes = sizes.copy()
    short = (sizes[:, 0] == 0) & (sizes.sum(axis=1) > 0)
    donor = np.where(sizes[:, 1] > sizes[:, 2], 1, 2)
    rows = np.flatnonzero(short)
    sizes[rows, donor[rows]] -= 1
    sizes[rows, 0] += 1
    return sizes


def assign_parts(
    strata: np.ndarray, fractions: tuple[float, float, float], seed: int
) -> np.ndarray:
    """Part code (0 train, 1 validation, 2 test) per candidate, candidates in index order."""
    m = len(strata)
    rng = np.random.Generator(np.random.PCG64(seed))
    permuted = rng.permutation(m)
    _, inverse, counts = np.unique(strata, return_inverse=True, return_counts=True)
    sizes = ensure_train(part_sizes(counts, fractions))
    # Group the permuted candidates by stratum, keeping the permuted order inside each.
    grouped = permuted[np.argsort(inverse[permuted], kind="stable")]
    group_of = inverse[grouped]
    starts = np.concatenate([[0], np.cumsum(counts)[:-1]]).astype(np.int64)
    rank = np.arange(m, dtype=np.int64) - starts[group_of]
    bounds = np.cumsum(sizes, axis=1)
    part = np.full(m, 2, dtype=np.int8)
    part[rank < bounds[group_of, 1]] = 1
    part[rank < bounds[group_of, 0]] = 0
    out = np.empty(m, dtype=np.int8)
    out[grouped] = part
    return out


def split_vertices(
    labels: np.ndarray,
    *,
    method: str,
    fractions: tuple[float, float, float],
    seed: int,
    only_labeled: bool,
) -> np.ndarray:
    """Part code per vertex (``-1`` for vertices outside every part), int8 [N]."""
    labels = np.asarray(labels, dtype=np.int64)
    candidates = np.flatnonzero(labels != UNLABELED) if only_labeled else np.arange(len(labels))
    strata = labels[candidates] if method == "stratified" else np.zeros(len(candidates), np.int64)
    out = np.full(len(labels), NO_PART, dtype=np.int8)
    out[candidates] = assign_parts(strata, fractions, seed)
    return out


def part_positions(part_of: np.ndarray) -> dict[str, np.ndarray]:
    """Sorted int64 positions of each part."""
    return {
        name: np.flatnonzero(part_of == code).astype(np.int64) for code, name in enumerate(PARTS)
    }


def part_flags(part_of: np.ndarray) -> dict[str, np.ndarray]:
    """Boolean membership [N] of each part."""
    return {name: part_of == code for code, name in enumerate(PARTS)}
