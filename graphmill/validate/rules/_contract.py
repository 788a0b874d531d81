"""Contract rules as pure functions over table row counts and column presence."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any


def count_in_range(count: int, bounds: Mapping[str, Any]) -> bool:
    """Whether ``count`` lies within ``bounds`` (``min`` and ``max`` inclusive, each optional).

    >>> count_in_range(34, {"min": 34, "max": 34})
    True
    """
    low, high = bounds.get("min"), bounds.get("max")
    return (low is None or count >= low) and (high is None or count <= high)


def missing_or_empty(rows: int | None) -> str | None:
    """Why a named table or column fails the contract: ``"absent"`` (``rows`` is None),
    ``"empty"`` (no rows or no values), or None when it is there."""
    if rows is None:
        return "absent"
    return "empty" if rows == 0 else None
