"""Property rules as pure functions over value-kind profiles and Arrow value columns.

A *profile* is the snapshot's per-column kind count (``{"integer": 10, "string": 2}``, see
``graphmill/_columns.py``); ``"null"`` entries are ignored everywhere. ``"ill-typed"``
counts values that the source could not read as the kind they must have: their declared
``kind``, or their RDF datatype (they are null in the column and the snapshot keeps their
text, see ``graphmill/connectors/_declared.py``): they are not a kind of their own for
:func:`kind_mix`, and they are always unexpected for :func:`unexpected_kind_count`.
Multi-valued (list) columns are checked element by element: :func:`element_values` flattens
them and keeps, for each element, the row it came from.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import TypeAlias

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill._columns import is_multi, kind_of_type

Column: TypeAlias = pa.Array | pa.ChunkedArray

NUMERIC_KINDS = frozenset({"integer", "float"})
ILL_TYPED = "ill-typed"


def _flat(column: Column) -> pa.Array:
    return column.combine_chunks() if isinstance(column, pa.ChunkedArray) else column


def observed_kinds(profile: Mapping[str, int]) -> dict[str, int]:
    """The profile without ``null`` and without kinds counted zero times, sorted by kind."""
    return {k: int(n) for k, n in sorted(profile.items()) if k != "null" and n > 0}


def kind_mix(profile: Mapping[str, int]) -> str:
    """``"none"`` (no values), ``"single"``, ``"numeric"`` (integers and floats only) or
    ``"mixed"``.

    >>> kind_mix({"integer": 3, "float": 1, "null": 2})
    'numeric'
    """
    kinds = set(observed_kinds(profile)) - {ILL_TYPED}
    if not kinds:
        return "none"
    if len(kinds) == 1:
        return "single"
    return "numeric" if kinds == NUMERIC_KINDS else "mixed"


def minority_count(profile: Mapping[str, int]) -> int:
    """Values not of the profile's most common kind (ties broken by kind name), not counting
    ill-typed ones."""
    top = top_kind(profile)
    return sum(n for k, n in observed_kinds(profile).items() if k not in (top, ILL_TYPED))


def unexpected_kind_count(profile: Mapping[str, int], declared: str | None) -> int:
    """Values whose kind is not ``declared``; ``ill-typed`` values always count, and are all
    that counts when no kind is declared.

    Integers are accepted where ``float`` is declared: the snapshot stores such a column as
    float64, which holds every integer up to 2**53 exactly.
    """
    if declared is None:
        return int(profile.get(ILL_TYPED, 0))
    accepted = {declared, "integer"} if declared == "float" else {declared}
    return sum(n for k, n in observed_kinds(profile).items() if k not in accepted)


def null_mask(column: Column) -> pa.BooleanArray:
    """True where a row has no value: null, or an empty list in a multi-valued column."""
    flat = _flat(column)
    if is_multi(flat.type):
        return pc.or_(pc.is_null(flat), pc.equal(pc.list_value_length(flat), 0)).fill_null(True)
    return pc.is_null(flat)


def element_values(column: Column) -> tuple[pa.Array, np.ndarray]:
    """The column's values (list elements, for a multi-valued column) and, for each value,
    the index of its row."""
    flat = _flat(column)
    if is_multi(flat.type):
        rows = pc.list_parent_indices(flat).to_numpy(zero_copy_only=False)
        return pc.list_flatten(flat), rows.astype(np.int64)
    return flat, np.arange(len(flat), dtype=np.int64)


def is_float_column(column: Column) -> bool:
    t = column.type.value_type if is_multi(column.type) else column.type
    return pa.types.is_floating(t)


def is_numeric_column(column: Column) -> bool:
    return kind_of_type(column.type) in NUMERIC_KINDS and not pa.types.is_decimal(
        column.type.value_type if is_multi(column.type) else column.type
    )


def non_finite_mask(values: Column) -> pa.BooleanArray:
    """True where a floating-point value is NaN, +inf or -inf (nulls are False)."""
    flat = _flat(values)
    if not pa.types.is_floating(flat.type):
        return pa.array(np.zeros(len(flat), dtype=bool))
    return pc.invert(pc.is_finite(flat)).fill_null(False)


def out_of_range_mask(
    values: Column, minimum: float | None, maximum: float | None
) -> pa.BooleanArray:
    """True where a number is below ``minimum`` or above ``maximum`` (bounds inclusive;
    nulls and NaN are False: NaN compares false with everything, IEEE 754-2008
    section 5.11, section number from memory)."""
    flat = _flat(values)
    mask = pa.array(np.zeros(len(flat), dtype=bool))
    if minimum is not None:
        mask = pc.or_(mask, pc.less(flat, pa.scalar(float(minimum))).fill_null(False))
    if maximum is not None:
        mask = pc.or_(mask, pc.greater(flat, pa.scalar(float(maximum))).fill_null(False))
    return mask


def stored_kinds(values: Column) -> pa.Array:
    """Each value's kind as far as its stored form tells (nulls are null): a text column's
    values by their text (the CSV typing rules of ``graphmill/connectors/_lexical.py``), a
    float column's integral values as ``integer``, any other column its type's kind. Used
    to sample the offenders of a mixed or unexpected kind, whose column holds them as text.
    """
    from graphmill.connectors._lexical import kind_masks

    flat = _flat(values)
    if pa.types.is_string(flat.type) or pa.types.is_large_string(flat.type):
        out = pa.nulls(len(flat), pa.string())
        for kind, mask in kind_masks(flat).items():
            out = pc.if_else(mask, pa.scalar(kind), out)
        return out
    if pa.types.is_floating(flat.type):
        integral = pc.and_(pc.is_finite(flat), pc.equal(pc.floor(flat), flat))
        kinds = pc.if_else(integral, pa.scalar("integer"), pa.scalar("float"))
        return pc.if_else(pc.is_valid(flat), kinds, pa.scalar(None, pa.string()))
    kind = pa.scalar(kind_of_type(flat.type))
    return pc.if_else(pc.is_valid(flat), kind, pa.scalar(None, pa.string()))


def top_kind(profile: Mapping[str, int]) -> str | None:
    """The profile's most common kind (ties broken by kind name), ill-typed values aside."""
    kinds = {k: n for k, n in observed_kinds(profile).items() if k != ILL_TYPED}
    return max(sorted(kinds), key=lambda k: kinds[k]) if kinds else None
