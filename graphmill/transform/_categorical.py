"""Vocabulary encoders: ``categories`` (integer codes), ``one-hot`` and ``multi-hot``.

Contract: values are compared as strings (see :func:`graphmill._columns.conform`). The
vocabulary is fitted on the fitted rows only: the ``max_categories`` most frequent values
(ties broken by UTF-8 byte order), then put in UTF-8 byte order of the value, never in
order of frequency, so a category keeps its column name and relative place when others
become more or less frequent (a vocabulary pinned from an earlier bundle keeps every
column, see ``_pinned``); for multi-hot a value's frequency is the number of fitted
vertices whose list holds it. Code ``k`` is the ``k``-th vocabulary entry;
the code ``len(vocabulary)`` is the *unknown bucket*: values unseen in the fitted rows, values
beyond ``max_categories``, and missing values. For multi-hot a missing or empty list sets no
column; a list holding any out-of-vocabulary value sets the unknown column.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill._columns import conform, is_multi
from graphmill.transform._encoders import BadValue

UNKNOWN = "<unknown>"


def category_strings(column: pa.Array) -> pa.Array:
    """Single-valued column as strings; BadValue for list columns."""
    if is_multi(column.type):
        raise BadValue("the property holds several values per vertex", hint="use multi-hot")
    return _flat(conform(column, pa.string()))


def list_strings(column: pa.Array) -> pa.Array:
    """Column as ``list<string>``; a scalar value becomes a one-element list."""
    column = _flat(column)
    if not is_multi(column.type):
        return _flat(conform(column, pa.list_(pa.string())))
    if pa.types.is_large_list(column.type):
        column = column.cast(pa.list_(column.type.value_type))
    lengths = pc.fill_null(pc.list_value_length(column), 0).to_numpy(zero_copy_only=False)
    offsets = np.concatenate([[0], np.cumsum(lengths)]).astype(np.int32)
    values = _flat(conform(pc.list_flatten(column), pa.string()))
    return pa.ListArray.from_arrays(pa.array(offsets), values, mask=column.is_null())


def fit_vocabulary(strings: pa.Array, max_categories: int) -> dict[str, Any]:
    """The ``max_categories`` most frequent values among ``strings`` (non-null; ties by
    value), in UTF-8 byte order.

    >>> fit_vocabulary(pa.array(["b", "b", "c", "a", "c", "c"]), 2)["vocabulary"]
    ['b', 'c']
    """
    present = strings.drop_null()
    if len(present) == 0:
        return {"vocabulary": [], "max_categories": max_categories, "distinct_fitted": 0}
    counted = pc.value_counts(present)
    table = pa.table({"value": counted.field("values"), "count": counted.field("counts")})
    ranked = table.sort_by([("count", "descending"), ("value", "ascending")])
    kept = ranked.column("value").slice(0, max_categories)
    # Arrow orders strings by their bytes: UTF-8 byte order, which is also code point order.
    vocabulary = pc.take(kept, pc.sort_indices(kept)).to_pylist()
    return {
        "vocabulary": vocabulary,
        "max_categories": max_categories,
        "distinct_fitted": table.num_rows,
    }


def fit_list_vocabulary(lists: pa.Array, max_categories: int) -> dict[str, Any]:
    """Like :func:`fit_vocabulary`, counting each value once per vertex."""
    pairs = pa.table({"vertex": pc.list_parent_indices(lists), "value": pc.list_flatten(lists)})
    distinct = (
        pairs.filter(pc.is_valid(pairs.column("value")))
        .group_by(["vertex", "value"], use_threads=False)
        .aggregate([])
    )
    return fit_vocabulary(_flat(distinct.column("value")), max_categories)


def category_codes(strings: pa.Array, vocabulary: list[str]) -> np.ndarray:
    """int64 [N]: position in the vocabulary, or ``len(vocabulary)`` (unknown bucket)."""
    found = pc.index_in(strings, value_set=pa.array(vocabulary, pa.string()))
    codes = pc.fill_null(found, len(vocabulary)).to_numpy(zero_copy_only=False)
    return np.asarray(codes, dtype=np.int64)


def one_hot(codes: np.ndarray, width: int) -> np.ndarray:
    """float64 [N, width] with a single 1 per row, at the row's code."""
    out = np.zeros((len(codes), width), dtype=np.float64)
    out[np.arange(len(codes)), codes] = 1.0
    return out


def multi_hot(lists: pa.Array, vocabulary: list[str]) -> np.ndarray:
    """float64 [N, len(vocabulary) + 1]: 1 where the vertex's list holds the value."""
    n = len(lists)
    out = np.zeros((n, len(vocabulary) + 1), dtype=np.float64)
    values = pc.list_flatten(lists)
    parents = np.asarray(pc.list_parent_indices(lists).to_numpy(zero_copy_only=False), np.int64)
    valid = np.asarray(pc.is_valid(values).to_numpy(zero_copy_only=False), dtype=bool)
    codes = category_codes(values, vocabulary)
    out[parents[valid], codes[valid]] = 1.0
    return out


def column_names(prop: str, vocabulary: list[str]) -> list[str]:
    """``<property>=<value>`` for each vocabulary value, then ``<property>=<unknown>``."""
    return [f"{prop}={value}" for value in vocabulary] + [f"{prop}={UNKNOWN}"]


def _flat(column: pa.Array | pa.ChunkedArray) -> pa.Array:
    if isinstance(column, pa.ChunkedArray):
        return column.combine_chunks()
    return column
