"""Arrow column helpers shared by every stage: value kinds and type unification.

A *value kind* is the engine-neutral name of what a value is: ``integer``, ``float``,
``boolean``, ``string``, ``datetime``, ``date``, ``binary``, or ``other``. Multi-valued
columns (lists) report the kind of their elements.
"""

from __future__ import annotations

import json
from collections.abc import Iterable, Mapping

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

VALUE_KINDS_KEY = b"graphmill.value_kinds"
DATETIME_TYPE = pa.timestamp("us", tz="UTC")

KIND_TO_ARROW: dict[str, pa.DataType] = {
    "integer": pa.int64(),
    "float": pa.float64(),
    "boolean": pa.bool_(),
    "string": pa.string(),
    "datetime": DATETIME_TYPE,
    "date": pa.date32(),
}


def kind_of_type(arrow_type: pa.DataType) -> str:
    """The value kind of an Arrow type (of the elements, for list types)."""
    t = arrow_type
    while pa.types.is_list(t) or pa.types.is_large_list(t):
        t = t.value_type
    if pa.types.is_integer(t):
        return "integer"
    if pa.types.is_floating(t) or pa.types.is_decimal(t):
        return "float"
    if pa.types.is_boolean(t):
        return "boolean"
    if pa.types.is_string(t) or pa.types.is_large_string(t) or pa.types.is_dictionary(t):
        return "string"
    if pa.types.is_timestamp(t):
        return "datetime"
    if pa.types.is_date(t):
        return "date"
    if pa.types.is_binary(t) or pa.types.is_large_binary(t):
        return "binary"
    if pa.types.is_null(t):
        return "null"
    return "other"


def is_multi(arrow_type: pa.DataType) -> bool:
    return pa.types.is_list(arrow_type) or pa.types.is_large_list(arrow_type)


def count_values(column: pa.Array | pa.ChunkedArray) -> int:
    """Non-null values; for list columns, non-null elements of all lists."""
    if is_multi(column.type):
        flat = pc.list_flatten(column)
        return len(flat) - flat.null_count
    return len(column) - column.null_count


def value_kinds_of(column: pa.Array | pa.ChunkedArray) -> dict[str, int]:
    """Kind counts of a column whose values all share its Arrow type."""
    n = count_values(column)
    return {kind_of_type(column.type): n} if n else {}


def merge_kinds(profiles: Iterable[Mapping[str, int]]) -> dict[str, int]:
    out: dict[str, int] = {}
    for profile in profiles:
        for kind, n in profile.items():
            out[kind] = out.get(kind, 0) + int(n)
    return dict(sorted(out.items()))


def encode_kinds(profiles: Mapping[str, Mapping[str, int]]) -> bytes:
    return json.dumps({k: dict(sorted(v.items())) for k, v in sorted(profiles.items())}).encode()


def decode_kinds(metadata: Mapping[bytes, bytes] | None) -> dict[str, dict[str, int]]:
    if not metadata or VALUE_KINDS_KEY not in metadata:
        return {}
    return json.loads(metadata[VALUE_KINDS_KEY])


def unify_types(types: Iterable[pa.DataType]) -> pa.DataType:
    """One type that every given type converts to without losing values.

    Rules: nulls are ignored; equal types stay; integers and floats meet in float64 (and
    integers of any width in int64); timestamps meet in UTC microseconds; a list and a scalar
    meet in a list; anything else meets in string.

    >>> unify_types([pa.int32(), pa.float64()])
    DataType(double)
    >>> unify_types([pa.int64(), pa.string()])
    DataType(string)
    """
    distinct = [t for t in dict.fromkeys(types) if not pa.types.is_null(t)]
    if not distinct:
        return pa.null()
    if len(distinct) == 1:
        return distinct[0]
    if any(is_multi(t) for t in distinct):
        inner = [t.value_type if is_multi(t) else t for t in distinct]
        return pa.list_(unify_types(inner))
    kinds = {kind_of_type(t) for t in distinct}
    if kinds == {"integer"}:
        return pa.int64()
    if kinds <= {"integer", "float"}:
        return pa.float64()
    if kinds == {"datetime"}:
        return DATETIME_TYPE
    if kinds == {"string"}:
        return pa.string()
    return pa.string()


def conform(column: pa.Array | pa.ChunkedArray, target: pa.DataType) -> pa.Array | pa.ChunkedArray:
    """Convert ``column`` to ``target`` as :func:`unify_types` promised."""
    if column.type == target:
        return column
    if pa.types.is_null(column.type):
        return pa.nulls(len(column), target)
    if is_multi(target) and not is_multi(column.type):
        inner = conform(column, target.value_type)
        if isinstance(inner, pa.ChunkedArray):
            inner = inner.combine_chunks()
        # a missing value becomes a missing list with no child slot, so that flattening and
        # parent indices agree (a masked slot over a child would count in one, not the other)
        present = np.asarray(inner.is_valid().to_numpy(zero_copy_only=False), dtype=np.int32)
        offsets = pa.array(np.concatenate([[0], np.cumsum(present)]).astype(np.int32))
        wrapped = pa.ListArray.from_arrays(offsets, inner.drop_null(), mask=inner.is_null())
        return wrapped.cast(target)
    if pa.types.is_string(target) and not pa.types.is_string(column.type):
        if pa.types.is_timestamp(column.type):
            # %S prints the fraction too (microsecond units); UTC columns print in UTC.
            return pc.strftime(column, format="%Y-%m-%dT%H:%M:%S")
        return pc.cast(column, pa.string())
    return pc.cast(column, target)
