"""Edge parts drawn from a keyed hash, stable across versions.

Contract: an item's part depends only on its key bytes and the seed, never on the other items,
so an edge (or vertex) present in two builds keeps its part whatever else changed.
:func:`keyed_unit_interval` maps each key to ``[0, 1)`` with BLAKE2b keyed by the seed (first
8 digest bytes as an unsigned integer over 2**64); :func:`parts_by_fraction` cuts that
interval at the cumulative fractions (train, then validation, then test). An edge's key is
its (source original ID, relation name, target original ID), each length-prefixed so that no
ID can imitate a separator; for an undirected relation the two IDs are taken in sorted
order, so both directions of a pair always share a part.
"""

from __future__ import annotations

import hashlib
from collections.abc import Iterable, Sequence

import numpy as np

PARTS = ("train", "validation", "test")


def keyed_unit_interval(keys: Iterable[bytes], seed: int) -> np.ndarray:
    """A number in ``[0, 1)`` per key, float64, from BLAKE2b keyed by ``seed``.

    >>> u = keyed_unit_interval([b"a", b"b", b"a"], seed=7)
    >>> bool(u[0] == u[2]) and bool(((0 <= u) & (u < 1)).all())
    True
    """
    secret = int(seed).to_bytes(8, "big")
    scale = float(2**64)
    return np.fromiter(
        (
            int.from_bytes(hashlib.blake2b(k, digest_size=8, key=secret).digest(), "big") / scale
            for k in keys
        ),
        dtype=np.float64,
    )


def _field(text: str) -> bytes:
    raw = text.encode("utf-8")
    return len(raw).to_bytes(4, "big") + raw


def edge_keys(
    source_ids: Sequence[str], relation: str, target_ids: Sequence[str], *, undirected: bool
) -> list[bytes]:
    """The hash key of each edge: (source ID, relation, target ID), length-prefixed; for an
    undirected relation the two IDs in sorted order."""
    name = _field(relation)
    keys = []
    for s, t in zip(source_ids, target_ids, strict=True):
        a, b = (min(s, t), max(s, t)) if undirected else (s, t)
        keys.append(_field(a) + name + _field(b))
    return keys


def parts_by_fraction(unit: np.ndarray, fractions: tuple[float, float, float]) -> np.ndarray:
    """Part code per item (0 train, 1 validation, 2 test), int8, cutting ``[0, 1)`` at the
    cumulative fractions.

    >>> parts_by_fraction(np.array([0.1, 0.75, 0.9]), (0.7, 0.15, 0.15)).tolist()
    [0, 1, 2]
    """
    train, validation, _ = fractions
    out = np.full(len(unit), 2, dtype=np.int8)
    out[unit < train + validation] = 1
    out[unit < train] = 0
    return out


def edge_parts(
    source_ids: Sequence[str],
    relation: str,
    target_ids: Sequence[str],
    *,
    undirected: bool,
    fractions: tuple[float, float, float],
    seed: int,
) -> np.ndarray:
    """Part code per edge (0 train, 1 validation, 2 test), int8, stable across versions."""
    keys = edge_keys(source_ids, relation, target_ids, undirected=undirected)
    return parts_by_fraction(keyed_unit_interval(keys, seed), fractions)


NO_PART = -1


def vertex_keys(ids: Sequence[str]) -> list[bytes]:
    """The hash key of each vertex: its original ID, length-prefixed (as in edge keys)."""
    return [_field(i) for i in ids]


def supervision_flags(keys: Sequence[bytes], seed: int, share: float) -> np.ndarray:
    """True for the edges held out of message passing as supervision: a second keyed hash
    (the key prefixed with ``supervision``) below ``share``; stable like the parts."""
    return keyed_unit_interval((b"supervision" + k for k in keys), seed) < share


def unseen_vertex_parts(source_part: np.ndarray, target_part: np.ndarray) -> np.ndarray:
    """Inductive edge parts from the parts of the two endpoints: the later of the two
    (train < validation < test), so a train edge touches train vertices only and an
    evaluation edge at least one vertex that no train edge touches.

    >>> unseen_vertex_parts(np.array([0, 0, 1, 2]), np.array([0, 1, 2, 0])).tolist()
    [0, 1, 2, 2]
    """
    return np.maximum(source_part, target_part).astype(np.int8)


def time_parts(times: np.ndarray, validation_from: float, test_from: float) -> np.ndarray:
    """Part per edge from its time (NaN: no part): before ``validation_from`` train, before
    ``test_from`` validation, else test.

    >>> time_parts(np.array([1.0, 5.0, 9.0, np.nan]), 5.0, 9.0).tolist()
    [0, 1, 2, -1]
    """
    out = np.full(len(times), NO_PART, dtype=np.int8)
    timed = ~np.isnan(times)
    out[timed & (times >= test_from)] = 2
    out[timed & (times < test_from)] = 1
    out[timed & (times < validation_from)] = 0
    return out
