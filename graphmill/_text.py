"""Words for counts in messages: the right plural, thousands separated, plain numbers."""

from __future__ import annotations

from typing import Any


def plural(n: int, word: str, many: str | None = None) -> str:
    """``1 error``, ``2 errors``, ``1,000 vertices``: a count and the right form of ``word``.

    >>> plural(1, "error"), plural(2, "error"), plural(0, "vertex", "vertices")
    ('1 error', '2 errors', '0 vertices')
    >>> plural(2, "query")
    '2 queries'
    """
    if many is None:
        many = (
            word[:-1] + "ies" if word.endswith("y") and word[-2:-1] not in "aeiou" else word + "s"
        )
    return f"{n:,} {word if n == 1 else many}"


def plain(value: Any) -> Any:
    """A numpy scalar as the Python number it holds (so messages never show ``np.float64``);
    anything else unchanged.

    >>> import numpy as np
    >>> repr(plain(np.float64(-5.0))), plain("x")
    ('-5.0', 'x')
    """
    item = getattr(value, "item", None)
    if callable(item) and type(value).__module__ == "numpy":
        return item()
    return value
