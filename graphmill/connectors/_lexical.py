"""Typing of text values (CSV cells) into value kinds, vectorized with pyarrow.compute.

Rules (common practice for CSV, no standard covers it): an empty cell is a missing value;
``integer`` is an optional sign and digits; ``float`` a decimal or exponent number, or
``inf``/``-inf``/``nan`` (any case); ``boolean`` is ``true``/``false`` (any case);
``datetime`` an ISO 8601 date and time (``T`` or space), optionally with ``Z`` or an offset;
``date`` an ISO 8601 calendar date. Anything else is ``string``.
"""

from __future__ import annotations

import pyarrow as pa
import pyarrow.compute as pc

from graphmill._columns import DATETIME_TYPE

PATTERNS: dict[str, str] = {
    "integer": r"^[+-]?[0-9]+$",
    "float": r"^[+-]?(([0-9]+\.?[0-9]*|\.[0-9]+)([eE][+-]?[0-9]+)?|[iI][nN][fF]|[nN][aA][nN])$",
    "boolean": r"^([tT][rR][uU][eE]|[fF][aA][lL][sS][eE])$",
    "datetime": (
        r"^[0-9]{4}-[0-9]{2}-[0-9]{2}[T ][0-9]{2}:[0-9]{2}(:[0-9]{2}(\.[0-9]+)?)?"
        r"(Z|[+-][0-9]{2}:?[0-9]{2})?$"
    ),
    "date": r"^[0-9]{4}-[0-9]{2}-[0-9]{2}$",
}
ORDER = ("integer", "float", "boolean", "datetime", "date")


def blank_to_null(values: pa.Array) -> pa.Array:
    """Empty strings become nulls."""
    return pc.if_else(pc.equal(values, ""), pa.scalar(None, values.type), values)


def kind_masks(values: pa.Array) -> dict[str, pa.Array]:
    """For each kind, a boolean mask of the values whose text has that kind (first match wins,
    in the order integer, float, boolean, datetime, date, string)."""
    taken = pc.is_null(values)
    masks: dict[str, pa.Array] = {}
    for kind in ORDER:
        mask = pc.and_not(
            pc.fill_null(pc.match_substring_regex(values, PATTERNS[kind]), False), taken
        )
        masks[kind] = mask
        taken = pc.or_(taken, mask)
    masks["string"] = pc.invert(taken)
    return masks


def kind_counts(values: pa.Array) -> dict[str, int]:
    counts = {kind: pc.sum(mask).as_py() or 0 for kind, mask in kind_masks(values).items()}
    return {k: v for k, v in counts.items() if v}


def parse_kind(values: pa.Array, kind: str) -> pa.Array:
    """Parse text into ``kind``; text that does not have that kind becomes null."""
    masks = kind_masks(values)
    if kind == "string":
        return values
    ok = pc.or_(masks["float"], masks["integer"]) if kind == "float" else masks[kind]
    kept = pc.if_else(ok, values, pa.scalar(None, pa.string()))
    if kind == "integer":
        return pc.cast(kept, pa.int64())
    if kind == "float":
        return pc.cast(kept, pa.float64())
    if kind == "boolean":
        return pc.equal(pc.utf8_lower(kept), "true")
    if kind == "date":
        parsed = pc.strptime(kept, format="%Y-%m-%d", unit="s", error_is_null=True)
        return pc.cast(parsed, pa.date32())
    # datetime: normalise separator and zone, then parse as UTC
    text = pc.replace_substring_regex(kept, r"^(.{10}) ", r"\1T")
    text = pc.replace_substring_regex(text, r"Z$", "+00:00")
    text = pc.replace_substring_regex(text, r"([+-][0-9]{2})([0-9]{2})$", r"\1:\2")
    text = pc.replace_substring_regex(text, r"T([0-9]{2}:[0-9]{2})($|[+-])", r"T\1:00\2")
    no_zone = pc.invert(
        pc.fill_null(pc.match_substring_regex(text, r"[+-][0-9]{2}:[0-9]{2}$"), True)
    )
    text = pc.if_else(no_zone, pc.binary_join_element_wise(text, "+00:00", ""), text)
    try:
        return pc.cast(text, DATETIME_TYPE)
    except pa.ArrowInvalid:  # an impossible date such as month 13: those cells become null
        whole = pc.replace_substring_regex(text, r"\.[0-9]+", "")
        parsed = pc.strptime(whole, format="%Y-%m-%dT%H:%M:%S%z", unit="us", error_is_null=True)
        return pc.cast(parsed, DATETIME_TYPE)


def infer_kind(counts: dict[str, int]) -> str:
    """The kind a column of text takes: its only kind, float for integer+float, else string."""
    kinds = set(counts)
    if not kinds:
        return "string"
    if len(kinds) == 1:
        return next(iter(kinds))
    if kinds <= {"integer", "float"}:
        return "float"
    return "string"
