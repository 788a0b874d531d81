"""Negative samples for link prediction: non-edges to score against each positive edge.

Contract: for each positive (s, t), in positive order, ``per_positive`` pairs (s, t') with t'
a vertex of the relation's target type (type-correct by construction), so the result is
int64 [2, n * per_positive] with the negatives of positive ``i`` at columns ``i*k .. i*k+k-1``.
No negative is a known edge of the relation in ANY part (``known``: every endpoint pair, and
for an undirected relation each pair in both orders). ``t'`` is drawn uniformly, or in
proportion to ``weights`` (e.g. degree among the train edges; uniform when they sum to 0),
by rejection from a seeded ``numpy.random.Generator(PCG64)``: equal inputs, equal output.
A source that has no non-edge left is refused with :class:`InputError`.
"""

from __future__ import annotations

import hashlib

import numpy as np

from graphmill.errors import InputError

MAX_ROUNDS = 200


def negatives_generator(seed: int, relation: str, part: str) -> np.random.Generator:
    """A generator seeded by the split seed, the relation and the part (each its own stream)."""
    tag = hashlib.blake2b(f"{relation}\x00{part}".encode(), digest_size=8).digest()
    return np.random.Generator(np.random.PCG64([seed, int.from_bytes(tag, "big")]))


def pair_codes(source: np.ndarray, target: np.ndarray, width: int) -> np.ndarray:
    return source.astype(np.int64) * np.int64(width) + target.astype(np.int64)


def sample_negatives(
    sources: np.ndarray,
    known: np.ndarray,
    *,
    target_count: int,
    per_positive: int,
    weights: np.ndarray | None,
    rng: np.random.Generator,
    where: str,
) -> np.ndarray:
    """int64 [2, len(sources) * per_positive]; ``known`` holds :func:`pair_codes` of every
    pair that is an edge (width ``target_count``)."""
    src = np.repeat(np.asarray(sources, dtype=np.int64), per_positive)
    dst = np.full(len(src), -1, dtype=np.int64)
    known = np.unique(known)
    p = None
    if weights is not None and weights.sum() > 0:
        p = weights.astype(np.float64) / weights.sum()
    todo = np.arange(len(src))
    for _ in range(MAX_ROUNDS):
        if len(todo) == 0 or target_count == 0:
            break
        drawn = rng.choice(target_count, size=len(todo), p=p)
        codes = pair_codes(src[todo], drawn, target_count)
        at = np.minimum(np.searchsorted(known, codes), max(len(known) - 1, 0))
        clash = known[at] == codes if len(known) else np.zeros(len(codes), bool)
        dst[todo[~clash]] = drawn[~clash]
        todo = todo[clash]
    if len(todo):
        raise InputError(
            f"{where}: no non-edge found for source index {int(src[todo[0]])} "
            f"after {MAX_ROUNDS} draws",
            key_path="task.negatives",
            hint="that vertex is linked to (nearly) every candidate; use uniform sampling or "
            "fewer negatives per positive",
        )
    return np.stack([src, dst])
