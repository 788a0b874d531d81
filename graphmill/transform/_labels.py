"""Class codes for the label property.

Contract: every label value is turned into a string (integers as digits, booleans as
``true``/``false``, datetimes as ISO 8601 in UTC); the classes are the distinct strings in
UTF-8 byte order, and a vertex's code is its class's position; ``-1`` means unlabeled (a
missing value). Sorting as strings means ``"10"`` comes before ``"9"``: the order is a
convention, not a meaning, and is recorded in the manifest as ``class_names``.
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill._columns import conform, is_multi
from graphmill.errors import InputError

UNLABELED = -1


def label_strings(column: pa.Array | pa.ChunkedArray, *, where: str) -> pa.Array:
    """The label values as a string array (nulls stay null)."""
    if is_multi(column.type):
        raise InputError(
            "the label property holds several values per vertex",
            key_path=where,
            hint="choose a single-valued property as the label",
        )
    strings = conform(column, pa.string())
    if isinstance(strings, pa.ChunkedArray):
        strings = strings.combine_chunks()
    return strings


def class_codes(strings: pa.Array) -> tuple[np.ndarray, list[str]]:
    """Codes int64 [N] (``-1`` for null) and the sorted class names.

    >>> codes, names = class_codes(pa.array(["b", None, "a", "b"]))
    >>> codes.tolist(), names
    ([1, -1, 0, 1], ['a', 'b'])
    """
    distinct = pc.unique(strings.drop_null())
    classes = distinct.take(pc.sort_indices(distinct))
    found = pc.index_in(strings, value_set=classes)
    codes = np.asarray(pc.fill_null(found, UNLABELED).to_numpy(zero_copy_only=False), np.int64)
    return codes, classes.to_pylist()
