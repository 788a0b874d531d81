"""Edge-leakage rules: pure functions over endpoint arrays and part positions.

Contract: each function returns the positions (into the evaluated relation's edges) of the
offending edges, sorted. Pairs are compared as ``source * width + target`` codes.

- :func:`seen_in_training`: evaluation edges whose pair, or (for a relation within one
  vertex type) whose reverse pair, is among the training message-passing edges; ``extra``
  adds pairs that message passing also holds (the forward form of an added reverse
  relation's training edges).
- :func:`parallel_in_other`: evaluation edges whose pair is an edge of another relation's
  message passing (given as pair codes, already oriented like this relation).
- :func:`after_cut`: training edges whose timestamp is at or after the validation cut.
"""

from __future__ import annotations

import numpy as np

from graphmill.transform._negatives import pair_codes

#: rule id -> (default severity, what it finds)
LEAKAGE_RULES: dict[str, tuple[str, str]] = {
    "evaluation-edge-in-training": (
        "error",
        "a validation or test edge whose pair or reverse is in training message passing",
    ),
    "evaluation-pair-in-other-relation": (
        "warning",
        "a validation or test pair that another relation's message passing holds as an edge",
    ),
    "training-edge-after-cut": (
        "error",
        "a training (message-passing) edge timed at or after the temporal split's first cut",
    ),
    "feature-copies-label": (
        "error",
        "a feature property of the labelled type that predicts the label on the train part "
        "at or above checks.label_copy_threshold",
    ),
    "part-changed-since-previous": (
        "warning",
        "a vertex or edge kept from the previous bundle that moved to another part",
    ),
}


def _isin(codes: np.ndarray, pool: np.ndarray) -> np.ndarray:
    return np.isin(codes, pool) if len(pool) else np.zeros(len(codes), dtype=bool)


def seen_in_training(
    endpoints: np.ndarray,
    evaluation: np.ndarray,
    training: np.ndarray,
    *,
    width: int,
    same_type: bool,
    extra: np.ndarray | None = None,
) -> np.ndarray:
    """Positions in ``evaluation`` of the edges whose pair (or reverse) is trained on.

    >>> ends = np.array([[0, 1, 2], [1, 0, 0]])
    >>> seen_in_training(ends, np.array([1, 2]), np.array([0]), width=3, same_type=True).tolist()
    [1]
    """
    s, t = endpoints[0], endpoints[1]
    pool = [pair_codes(s[training], t[training], width)]
    if same_type:
        pool.append(pair_codes(t[training], s[training], width))
    if extra is not None:
        pool.append(extra)
    codes = pair_codes(s[evaluation], t[evaluation], width)
    return np.sort(evaluation[_isin(codes, np.concatenate(pool))])


def parallel_in_other(
    endpoints: np.ndarray, evaluation: np.ndarray, other: np.ndarray, *, width: int
) -> np.ndarray:
    """Positions in ``evaluation`` of the edges whose pair code is in ``other``."""
    codes = pair_codes(endpoints[0, evaluation], endpoints[1, evaluation], width)
    return np.sort(evaluation[_isin(codes, other)])


def after_cut(times: np.ndarray, training: np.ndarray, cut: float) -> np.ndarray:
    """Positions in ``training`` whose time is at or after ``cut`` (NaN: untimed, never).

    >>> after_cut(np.array([1.0, 9.0, np.nan]), np.array([0, 1, 2]), 5.0).tolist()
    [1]
    """
    found = times[training]
    return np.sort(training[~np.isnan(found) & (found >= cut)])
