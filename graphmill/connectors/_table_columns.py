"""Column roles in table files: which Arrow types an ID, selector or property column may have.

IDs and the ``type_column`` / ``relation_column`` selectors must be text (UTF-8 strings or
binary), integers, or a dictionary of those; they become strings. Property columns keep
their values: integers become int64, floats and decimals float64, timestamps UTC
microseconds (a timestamp without zone is taken as UTC; finer units are truncated), dates
date32, dictionaries their values, lists (of those) lists. Any other type (struct, map,
union, time of day, duration, nested lists, ...) is refused with :class:`InputError` naming
the column, never passed on to fail later.
"""

from __future__ import annotations

from typing import TypeAlias

import pyarrow as pa
import pyarrow.compute as pc

from graphmill._columns import DATETIME_TYPE
from graphmill.errors import InputError

Column: TypeAlias = pa.Array | pa.ChunkedArray


def _is_text(t: pa.DataType) -> bool:
    return pa.types.is_string(t) or pa.types.is_large_string(t) or pa.types.is_string_view(t)


def _is_bytes(t: pa.DataType) -> bool:
    return (
        pa.types.is_binary(t)
        or pa.types.is_large_binary(t)
        or pa.types.is_binary_view(t)
        or pa.types.is_fixed_size_binary(t)
    )


def _undictionary(column: Column) -> Column:
    return column.cast(column.type.value_type) if pa.types.is_dictionary(column.type) else column


def key_text(column: Column, name: str, file: str, first_row: int) -> Column:
    """An ID or selector column as strings; refuses other types and bytes that are not UTF-8
    (naming the 1-based row, counted from ``first_row``)."""
    column = _undictionary(column)
    t = column.type
    if pa.types.is_string(t):
        return column
    if _is_text(t) or pa.types.is_integer(t):
        return pc.cast(column, pa.string())
    if _is_bytes(t):
        try:
            return pc.cast(column, pa.string())
        except pa.ArrowInvalid:
            bad = next(i for i, v in enumerate(column.to_pylist()) if not _utf8(v))
            raise InputError(
                f"column {name!r} holds bytes that are not UTF-8 text",
                file=file,
                record=f"row {first_row + bad}",
                hint="ID and selector columns hold text or integers; re-encode it as UTF-8 strings",
            ) from None
    raise InputError(
        f"column {name!r} has the type {t}; an ID or selector column must hold text or integers",
        file=file,
        hint="write the column as strings (or point the spec at another column)",
    )


def _utf8(value: bytes | None) -> bool:
    if value is None:
        return True
    try:
        value.decode("utf-8")
    except UnicodeDecodeError:
        return False
    return True


def first_missing(ids: Column) -> int | None:
    """The 0-based index of the first null or empty ID, if any."""
    missing = pc.fill_null(pc.equal(ids, ""), True)
    if not pc.any(missing).as_py():
        return None
    return int(pc.index(missing, True).as_py())


def property_values(column: Column, name: str, file: str) -> tuple[Column, int]:
    """A property column in one of the snapshot's value types (see the module docstring), and
    how many of its values had no value there (unsigned integers beyond int64: now null)."""
    t = column.type
    if pa.types.is_list(t) or pa.types.is_large_list(t) or pa.types.is_fixed_size_list(t):
        inner = _scalar_type(t.value_type, name, file, nested=True)
        if pa.types.is_uint64(t.value_type):
            inner = pa.float64()  # rare enough to keep simple: no element is lost
        return column.cast(pa.list_(inner)), 0
    target = _scalar_type(t, name, file, nested=False)
    if pa.types.is_dictionary(t):
        column, t = _undictionary(column), t.value_type
    lost = 0
    if pa.types.is_uint64(t):
        beyond = pc.greater(column, pa.scalar(2**63 - 1, pa.uint64()))
        lost = int(pc.sum(beyond).as_py() or 0)
        if lost:
            column = pc.if_else(beyond, pa.scalar(None, t), column)
    if target == t:
        return column, lost
    return column.cast(target, safe=not pa.types.is_timestamp(t)), lost


def _scalar_type(t: pa.DataType, name: str, file: str, *, nested: bool) -> pa.DataType:
    if pa.types.is_dictionary(t):
        t = t.value_type
    if pa.types.is_null(t) or pa.types.is_boolean(t) or pa.types.is_string(t):
        return t
    if _is_text(t):
        return pa.string()
    if pa.types.is_integer(t):
        return pa.int64()
    if pa.types.is_floating(t) or pa.types.is_decimal(t):
        return pa.float64()
    if pa.types.is_timestamp(t):
        return DATETIME_TYPE
    if pa.types.is_date(t):
        return pa.date32()
    if _is_bytes(t):
        return pa.binary()
    what = "lists of lists" if nested and pa.types.is_list(t) else f"the type {t}"
    raise InputError(
        f"column {name!r} has {what}, which graphmill cannot stage as a property",
        file=file,
        hint=(
            "properties may be text, numbers, booleans, dates, timestamps or lists of those; "
            "convert or flatten the column, or leave it out of the spec"
        ),
    )
