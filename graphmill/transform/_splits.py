"""Train / validation / test parts for the labelled vertex type, stable across versions.

Contract: each candidate vertex (the labelled ones with ``only_labeled``, else all) gets a
number ``u`` in [0, 1) from :func:`stable_unit_interval` over its ORIGINAL ID and the seed
(never its index, which shifts when other vertices come or go; never its pseudonym, which
changes with the key). Within each stratum (a class for ``stratified``, the unlabeled as one
more stratum when they take part; everything for ``random``) the vertices are ranked by
``u`` and two boundaries cut the ranking into train, validation and test.

Each boundary sits where the fractions put it (``u < train``, ``u < train + validation``)
unless that is more than ``s`` vertices from its exact position, which is the cumulative
size by the largest-remainder rule (:func:`part_sizes`); then it is moved to ``s`` away.
``s = ceil(tolerance * n)`` for a stratum of ``n`` (``0`` when ``tolerance`` is 0, which
gives exact per-class sizes like a fresh draw, at the cost of stability). Every non-empty
stratum keeps at least one train vertex. So a vertex present in two builds keeps its part
unless its stratum's boundary had to move, and the per-class shares stay within the
tolerance; the achieved shares are reported (:func:`achieved_shares`).
"""

from __future__ import annotations

import hashlib
import math

import numpy as np
import pyarrow as pa

from graphmill.transform._labels import UNLABELED

PARTS = ("train", "validation", "test")
NO_PART = -1
HASH = "blake2b-64, key = the seed in decimal ASCII, message = the UTF-8 original ID"
UNLABELED_STRATUM = "<unlabeled>"
#: IDs hashed per slice: their Python bytes objects live only as long as one slice
HASH_SLICE = 1 << 16


def stable_unit_interval(ids: pa.Array, seed: int) -> np.ndarray:
    """float64 [N] in [0, 1): the top 53 bits of BLAKE2b (RFC 7693, 8-byte digest, keyed
    with ``str(seed)``) of each UTF-8 ID, divided by 2**53. Equal IDs and seeds give equal
    numbers in every build, on every machine. About 1 s per million IDs (one C-level hash
    per ID; no vectorized keyed hash exists in numpy or pyarrow).

    >>> stable_unit_interval(pa.array(["a", "b"]), 7).round(6).tolist()
    [0.192491, 0.901871]
    """
    base = hashlib.blake2b(digest_size=8, key=str(int(seed)).encode("ascii"))

    def digest(value: bytes) -> bytes:
        h = base.copy()
        h.update(value)
        return h.digest()

    out = np.empty(len(ids), dtype=np.float64)
    binary = ids.cast(pa.binary())
    for start in range(0, len(binary), HASH_SLICE):  # Python bytes for one slice at a time
        raw = binary.slice(start, HASH_SLICE).to_pylist()
        words = np.frombuffer(b"".join(map(digest, raw)), dtype=">u8").astype(np.uint64)
        out[start : start + len(raw)] = (words >> np.uint64(11)).astype(np.float64) * 2.0**-53
    return out


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
    strata: np.ndarray,
    units: np.ndarray,
    fractions: tuple[float, float, float],
    tolerance: float,
) -> np.ndarray:
    """Part code (0 train, 1 validation, 2 test) per candidate, by the module's rule."""
    m = len(strata)
    if m == 0:
        return np.empty(0, dtype=np.int8)
    _, inverse, counts = np.unique(strata, return_inverse=True, return_counts=True)
    inverse = inverse.reshape(-1)
    exact = np.cumsum(ensure_train(part_sizes(counts, fractions)), axis=1)
    cut1, cut2 = fractions[0], fractions[0] + fractions[1]
    by_hash1 = np.bincount(inverse, weights=units < cut1, minlength=len(counts))
    by_hash2 = np.bincount(inverse, weights=units < cut2, minlength=len(counts))
    slack = np.array([math.ceil(tolerance * n - 1e-9) for n in counts], dtype=np.int64)
    first = np.clip(by_hash1.astype(np.int64), exact[:, 0] - slack, exact[:, 0] + slack)
    first = np.clip(first, 1, counts)
    second = np.clip(by_hash2.astype(np.int64), exact[:, 1] - slack, exact[:, 1] + slack)
    second = np.clip(second, first, counts)
    order = np.lexsort((np.arange(m), units, inverse))  # by stratum, then u, then position
    group = inverse[order]
    starts = np.concatenate([[0], np.cumsum(counts)[:-1]]).astype(np.int64)
    rank = np.arange(m, dtype=np.int64) - starts[group]
    part = np.full(m, 2, dtype=np.int8)
    part[rank < second[group]] = 1
    part[rank < first[group]] = 0
    out = np.empty(m, dtype=np.int8)
    out[order] = part
    return out


def split_vertices(
    labels: np.ndarray,
    units: np.ndarray,
    *,
    method: str,
    fractions: tuple[float, float, float],
    tolerance: float = 0.05,
    only_labeled: bool,
) -> np.ndarray:
    """Part code per vertex (``-1`` for vertices outside every part), int8 [N].

    ``units`` are the vertices' :func:`stable_unit_interval` numbers, in index order.
    """
    labels = np.asarray(labels, dtype=np.int64)
    candidates = np.flatnonzero(labels != UNLABELED) if only_labeled else np.arange(len(labels))
    strata = labels[candidates] if method == "stratified" else np.zeros(len(candidates), np.int64)
    out = np.full(len(labels), NO_PART, dtype=np.int8)
    out[candidates] = assign_parts(strata, np.asarray(units)[candidates], fractions, tolerance)
    return out


def achieved_shares(part_of: np.ndarray, labels: np.ndarray, classes: list[str]) -> dict:
    """Per class (and ``<unlabeled>`` when placed): each part's share of its placed vertices,
    rounded to 4 digits. Classes with no placed vertex are left out."""
    out: dict[str, dict[str, float]] = {}
    names = [*classes, UNLABELED_STRATUM]
    for code, name in enumerate(names):
        value = UNLABELED if code == len(classes) else code
        members = part_of[(labels == value) & (part_of >= 0)]
        if len(members):
            counts = np.bincount(members, minlength=3) / len(members)
            out[name] = {p: round(float(c), 4) for p, c in zip(PARTS, counts, strict=True)}
    return out


def part_positions(part_of: np.ndarray) -> dict[str, np.ndarray]:
    """Sorted int64 positions of each part."""
    return {
        name: np.flatnonzero(part_of == code).astype(np.int64) for code, name in enumerate(PARTS)
    }


def part_flags(part_of: np.ndarray) -> dict[str, np.ndarray]:
    """Boolean membership [N] of each part."""
    return {name: part_of == code for code, name in enumerate(PARTS)}
