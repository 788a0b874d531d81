"""Gremlin values (as gremlinpython deserializes them) into Arrow columns.

Each property arrives as one list per element (``values(key).fold()``). A census of the
Python types on the page (``Counter(map(type, ...))``, no Python-level loop) picks the fast
path, one ``pyarrow.array`` call with an explicit type, when the values share one kind:
integer → int64, float (Java float/double) → float64, integers and floats together →
float64 (with both counts reported), boolean, string, datetime (Java ``Date``, naive UTC in
Python, or ``OffsetDateTime``) → timestamp[us, UTC], bytes → binary. Everything else takes
the slow path, value by value: UUID and char → string; BigDecimal →
float64 when the double prints back as the same decimal, else its decimal text; BigInteger
beyond int64 → its decimal text; maps and other objects → JSON text (kind ``other``). A page
whose values have several kinds is stored as text (each kind rendered by
:func:`graphmill._columns.conform`, like the snapshot does), with the kind counts reported.

A List or Set value (single cardinality) counts as several values. An element without the
property gets null. A property declared ``multi`` becomes a sorted list; one not declared
``multi`` stays a list (sorted) only on pages where some element has several values.
"""

from __future__ import annotations

import base64
import datetime as dt
import decimal
import json
import uuid
from collections import Counter
from collections.abc import Sequence
from itertools import chain
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill._columns import DATETIME_TYPE, conform
from graphmill.errors import InputError

_GROUP_TYPES: dict[str, pa.DataType] = {
    "boolean": pa.bool_(),
    "integer": pa.int64(),
    "float": pa.float64(),
    "datetime": DATETIME_TYPE,
    "string": pa.string(),
    "binary": pa.binary(),
}
_INT64 = (-(2**63), 2**63 - 1)
_FAST_KIND: dict[type, str] = {
    bool: "boolean",
    int: "integer",
    float: "float",
    str: "string",
    dt.datetime: "datetime",
    bytes: "binary",
}
# subclasses gremlinpython uses (long, short, SingleByte, SingleChar, ByteBuffer); bool and
# its timestamp float subclass are matched exactly above or fall to the slow path
_FAST_BASES: tuple[tuple[type, str], ...] = ((int, "integer"), (str, "string"), (bytes, "binary"))
_ARROW_ERRORS = (pa.ArrowInvalid, pa.ArrowTypeError, pa.ArrowNotImplementedError, OverflowError)


def id_strings(values: Sequence[Any], *, what: str) -> pa.Array:
    """Element ids as strings (``str()`` of the id). Refuses ids of several families."""
    first = values[0] if values else ""
    try:
        if isinstance(first, int) and not isinstance(first, bool):
            return pa.array(values, pa.int64()).cast(pa.string())
        return pa.array(values, pa.string())
    except (*_ARROW_ERRORS, TypeError):
        pass
    families = {_id_family(t) for t in set(map(type, values))}
    if len(families) > 1:
        raise InputError(
            f"{what} ids are of several types ({', '.join(sorted(families))})",
            hint="graphmill reads a label in id order, which needs one id type per label",
        )
    return pa.array(list(map(str, values)), pa.string())


def _id_family(cls: type) -> str:
    if issubclass(cls, bool):
        return "boolean"
    if issubclass(cls, int | float):
        return "number"
    if issubclass(cls, str):
        return "string"
    return cls.__name__


def property_array(
    values: Sequence[list[Any]], *, multi: bool
) -> tuple[pa.Array, dict[str, int] | None]:
    """One column from per-element value lists, and the kind counts when the column mixes
    kinds (integers with floats in a float64 column, or anything rendered as text)."""
    census = Counter(map(type, chain.from_iterable(values)))
    kinds = _fast_kinds(census)
    lists = _fast_lists(values, kinds) if kinds is not None else None
    if lists is None:
        lists, reported = _slow_lists(values)
    else:
        reported = kinds if kinds and len(kinds) > 1 else None
    lengths = pc.list_value_length(lists)
    longest = pc.max(lengths).as_py() or 0
    if not multi and longest <= 1:
        starts = lists.offsets[:-1]
        index = pc.if_else(pc.greater(lengths, 0), starts, pa.scalar(None, starts.type))
        return lists.values.take(index), reported
    ordered = _sort_within_lists(lists)
    empty = pc.equal(lengths, 0)
    return pa.ListArray.from_arrays(ordered.offsets, ordered.values, mask=empty), reported


def _fast_kinds(census: Counter[type]) -> dict[str, int] | None:
    """Kind counts when every value type has a one-call conversion, else None."""
    kinds: Counter[str] = Counter()
    for cls, n in census.items():
        kind = _FAST_KIND.get(cls) or next(
            (k for base, k in _FAST_BASES if issubclass(cls, base)), None
        )
        if kind is None:
            return None
        kinds[kind] += n
    if len(kinds) > 1 and set(kinds) != {"integer", "float"}:
        return None
    return dict(sorted(kinds.items()))


def _fast_lists(values: Sequence[list[Any]], kinds: dict[str, int]) -> pa.ListArray | None:
    target = pa.float64() if "float" in kinds else _GROUP_TYPES.get(next(iter(kinds), ""))
    try:
        return pa.array(values, type=pa.list_(target or pa.null()))
    except _ARROW_ERRORS:  # integers beyond int64
        return None


def _slow_lists(values: Sequence[list[Any]]) -> tuple[pa.ListArray, dict[str, int] | None]:
    flat: list[Any] = []
    offsets = [0]
    for row in values:
        for value in row:
            if isinstance(value, list | tuple | set | frozenset):
                flat.extend(value)
            else:
                flat.append(value)
        offsets.append(len(flat))
    items, kinds = mixed_values(flat)
    return pa.ListArray.from_arrays(pa.array(offsets, pa.int32()), items), kinds


def mixed_values(values: list[Any]) -> tuple[pa.Array, dict[str, int] | None]:
    """Values of any types as one array: typed when they share a kind, else text."""
    groups: dict[str, list[int]] = {}
    normal: list[Any] = []
    for i, value in enumerate(values):
        group, plain = classify(value)
        groups.setdefault(group, []).append(i)
        normal.append(plain)
    if not values:
        return pa.array([], pa.null()), None
    if len(groups) == 1 and next(iter(groups)) in _GROUP_TYPES:
        group = next(iter(groups))
        return pa.array(normal, _GROUP_TYPES[group]), None
    parts: list[pa.Array] = []
    for group, where in groups.items():
        chosen = [normal[i] for i in where]
        typed = pa.array(chosen, _GROUP_TYPES.get(group, pa.string()))
        if group == "binary":
            typed = pa.array([base64.b64encode(b).decode() for b in chosen], pa.string())
        parts.append(conform(typed, pa.string()))
    order = np.concatenate([np.asarray(w, dtype=np.int64) for w in groups.values()])
    inverse = np.empty_like(order)
    inverse[order] = np.arange(len(order))
    text = pa.concat_arrays(parts).take(pa.array(inverse))
    kinds: dict[str, int] = {}
    for group, where in groups.items():
        kind = group.split("-")[0]
        kinds[kind] = kinds.get(kind, 0) + len(where)
    return text, dict(sorted(kinds.items()))


def classify(value: Any) -> tuple[str, Any]:
    """(group, normalised value). Groups ending in ``-text`` hold a kind rendered as text."""
    if isinstance(value, bool):
        return "boolean", value
    if isinstance(value, int):
        if _INT64[0] <= value <= _INT64[1]:
            return "integer", int(value)
        return "integer-text", str(int(value))
    if isinstance(value, float):
        if type(value).__name__ == "timestamp":  # gremlinpython's java.sql.Timestamp
            return "datetime", dt.datetime.fromtimestamp(float(value), dt.UTC)
        return "float", float(value)
    if isinstance(value, str):
        return "string", str(value)
    if isinstance(value, dt.datetime):
        aware = value if value.tzinfo else value.replace(tzinfo=dt.UTC)
        return "datetime", aware
    if isinstance(value, bytes | bytearray):
        return "binary", bytes(value)
    if isinstance(value, uuid.UUID):
        return "string", str(value)
    exact = _decimal_of(value)
    if exact is not None:
        as_float = float(exact)
        if decimal.Decimal(repr(as_float)) == exact:
            return "float", as_float
        return "float-text", str(exact)
    return "other", json.dumps(value, sort_keys=True, default=json_default)


def _decimal_of(value: Any) -> decimal.Decimal | None:
    if isinstance(value, decimal.Decimal):
        return value
    if type(value).__name__ == "BigDecimal" and hasattr(value, "unscaled_value"):
        return decimal.Decimal(value.unscaled_value).scaleb(-value.scale)
    return None


def json_default(value: Any) -> Any:
    """JSON form of values ``json`` does not know (used for maps and meta-properties)."""
    if isinstance(value, dt.datetime):
        aware = value if value.tzinfo else value.replace(tzinfo=dt.UTC)
        return aware.astimezone(dt.UTC).isoformat()
    if isinstance(value, bytes | bytearray):
        return base64.b64encode(bytes(value)).decode()
    if isinstance(value, set | frozenset):
        return sorted(value, key=repr)
    if isinstance(value, dt.timedelta):  # ISO 8601 duration, as Java's Duration prints it
        sign, seconds = ("-" if value < dt.timedelta(0) else ""), abs(value.total_seconds())
        return f"{sign}PT{seconds:.6f}".rstrip("0").rstrip(".") + "S"
    exact = _decimal_of(value)
    if exact is not None:
        return str(exact)
    if isinstance(value, dict):
        return {str(k): v for k, v in value.items()}
    return str(value)


def _sort_within_lists(lists: pa.ListArray) -> pa.ListArray:
    """Each list's items in ascending order (one sort over the whole page)."""
    items = lists.flatten()
    if len(items) == 0:
        return lists
    table = pa.table({"row": pc.list_parent_indices(lists), "item": items})
    order = pc.sort_indices(table, sort_keys=[("row", "ascending"), ("item", "ascending")])
    return pa.ListArray.from_arrays(lists.offsets, items.take(order))


def meta_json(values: Sequence[list[dict[str, Any]]]) -> pa.Array:
    """Meta-properties as JSON text per element: ``[{"value": v, "meta": {...}}, ...]``
    sorted by value; null for an element without the property. (A loop per element: this
    column exists only where a spec asks for it.)"""
    out: list[str | None] = []
    for row in values:
        items = [
            (
                json.dumps(entry["v"], default=json_default),
                {"value": entry["v"], "meta": {str(k): v for k, v in entry["m"].items()}},
            )
            for entry in row
        ]
        texts = [
            json.dumps(item, sort_keys=True, default=json_default)
            for _, item in sorted(
                items, key=lambda pair: (pair[0], json.dumps(pair[1], sort_keys=True, default=str))
            )
        ]
        out.append("[" + ", ".join(texts) + "]" if texts else None)
    return pa.array(out, pa.string())
