"""Typing of text values (CSV cells) into value kinds, vectorized with pyarrow.compute.

Rules (common practice for CSV, no standard covers it): an empty cell is a missing value;
``integer`` is an optional sign (``+`` or ``-``) and digits, as in XML Schema's
``xsd:integer``; ``float`` a decimal or exponent number, or ``inf``/``-inf``/``nan`` (any
case); ``boolean`` is ``true``/``false`` (any case); ``datetime`` an ISO 8601 date and time
(``T`` or space), optionally with ``Z`` or an offset (none: taken as UTC); ``date`` an ISO
8601 calendar date. Anything else is ``string``.

A value that has the shape of its kind but no value of it (an integer beyond int64, month
13, 29 February 2021, year 0000) becomes null and is counted as ``ill-typed``, as are values
that do not match a property's declared ``date_format`` (``strptime`` directives, e.g.
``%d/%m/%Y``).
"""

from __future__ import annotations

import pyarrow as pa
import pyarrow.compute as pc

from graphmill._columns import DATETIME_TYPE

ILL_TYPED = "ill-typed"
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
# int64's extremes without sign (ISO/IEC 9899 INT64_MAX; the minimum is one more).
_INT64_MAX = "9223372036854775807"
_INT64_MIN_MAGNITUDE = "9223372036854775808"


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


def _count(mask: pa.Array) -> int:
    return int(pc.sum(mask).as_py() or 0)


def kind_counts(values: pa.Array) -> dict[str, int]:
    counts = {kind: _count(mask) for kind, mask in kind_masks(values).items()}
    return {k: v for k, v in counts.items() if v}


def _declared_masks(values: pa.Array, kind: str) -> dict[str, pa.Array] | None:
    """:func:`kind_masks` computed with one or two patterns instead of five, when every value
    has the declared kind (integers count apart under ``float``); ``None`` otherwise.
    Valid because the patterns of boolean, datetime and date overlap no other kind's."""
    shapes = ("integer", "float") if kind == "float" else (kind,)
    found = {k: pc.fill_null(pc.match_substring_regex(values, PATTERNS[k]), False) for k in shapes}
    if kind == "float":
        found["float"] = pc.and_not(found["float"], found["integer"])
    covered = sum(_count(mask) for mask in found.values())
    if covered != len(values) - values.null_count:
        return None
    nothing = pa.repeat(pa.scalar(False), len(values))
    return {k: found.get(k, nothing) for k in (*ORDER, "string")}


def typed_values(
    values: pa.Array, kind: str | None, *, date_format: str | None = None
) -> tuple[pa.Array, dict[str, int]]:
    """Text (blank already null) typed as ``kind`` (inferred when ``None``), with kind counts.

    >>> typed_values(pa.array(["+7", "99999999999999999999", "x"]), "integer")[1]
    {'ill-typed': 1, 'integer': 1, 'string': 1}
    """
    if date_format is not None and kind in ("date", "datetime"):
        parsed = parse_with_format(values, kind, date_format)
        good = len(parsed) - parsed.null_count
        ill = len(values) - values.null_count - good
        return parsed, {k: n for k, n in ((kind, good), (ILL_TYPED, ill)) if n}
    masks = _declared_masks(values, kind) if kind not in (None, "string") else None
    if masks is None:
        masks = kind_masks(values)
    counts = {k: _count(mask) for k, mask in masks.items()}
    kind = kind or infer_kind({k: n for k, n in counts.items() if n})
    parsed = parse_kind(values, kind, masks)
    if kind != "string":
        for shape in ("integer", "float") if kind == "float" else (kind,):
            lost = _count(pc.and_(masks[shape], pc.is_null(parsed)))
            counts[shape] -= lost
            counts[ILL_TYPED] = counts.get(ILL_TYPED, 0) + lost
    return parsed, {k: n for k, n in sorted(counts.items()) if n}


def parse_with_format(values: pa.Array, kind: str, date_format: str) -> pa.Array:
    """Parse text with ``strptime`` directives; text that does not match, or names a day that
    does not exist (31 February), becomes null. A datetime without ``%z`` is taken as UTC."""
    parsed = pc.strptime(values, format=date_format, unit="us", error_is_null=True)
    if "%z" not in date_format and "%Z" not in date_format:
        parsed = pc.if_else(_round_trips(parsed, values, date_format), parsed, None)
    if kind == "date":
        return pc.cast(pc.cast(parsed, pa.timestamp("us")), pa.date32())
    if parsed.type.tz is None:
        parsed = pc.assume_timezone(parsed, "UTC")
    return pc.cast(parsed, DATETIME_TYPE)


def _round_trips(parsed: pa.Array, text: pa.Array, date_format: str) -> pa.Array:
    """Whether ``parsed`` printed with ``date_format`` gives ``text`` back (case and leading
    zeros aside): strptime rolls 31 February over into March, printing it back does not."""
    seconds = pc.cast(pc.cast(parsed, pa.timestamp("us")), pa.timestamp("s"), safe=False)
    again = pc.strftime(seconds, format=date_format)
    same = pc.fill_null(pc.equal(again, text), False)
    if pc.all(pc.or_(same, pc.is_null(parsed))).as_py():
        return same

    def norm(values: pa.Array) -> pa.Array:
        return pc.replace_substring_regex(pc.utf8_lower(values), r"(^|[^0-9])0+([0-9])", r"\1\2")

    return pc.fill_null(pc.equal(norm(again), norm(text)), False)


def parse_kind(values: pa.Array, kind: str, masks: dict[str, pa.Array] | None = None) -> pa.Array:
    """Parse text into ``kind``; text that does not have that kind, or has it but no value of
    it (beyond int64, an impossible date), becomes null."""
    if kind == "string":
        return values
    masks = masks if masks is not None else kind_masks(values)
    ok = pc.or_(masks["float"], masks["integer"]) if kind == "float" else masks[kind]
    kept = pc.if_else(ok, values, pa.scalar(None, pa.string()))
    if kind == "integer":
        return _parse_integers(kept)
    if kind == "float":
        return pc.cast(kept, pa.float64())
    if kind == "boolean":
        return pc.equal(pc.utf8_lower(kept), "true")
    if kind in ("date", "datetime"):  # years run from 1 to 9999, as in XML Schema and RDF
        kept = pc.if_else(pc.starts_with(kept, "0000"), pa.scalar(None, pa.string()), kept)
    if kind == "date":
        try:  # Arrow's cast is strict (no 30 February) but all or nothing
            return pc.cast(kept, pa.date32())
        except pa.ArrowInvalid:
            return parse_with_format(kept, "date", "%Y-%m-%d")
    return _parse_datetimes(kept)


def _parse_integers(kept: pa.Array) -> pa.Array:
    """Optionally signed digits to int64; beyond int64 becomes null."""
    try:
        return pc.cast(kept, pa.int64())
    except pa.ArrowInvalid:  # a '+' sign, or a value beyond int64
        digits = pc.replace_substring_regex(kept, r"^\+", "")
        negative = pc.fill_null(pc.starts_with(digits, "-"), False)
        magnitude = pc.replace_substring_regex(digits, r"^-?0*", "")
        width = pc.utf8_length(magnitude)
        limit = pc.if_else(negative, _INT64_MIN_MAGNITUDE, _INT64_MAX)
        fits = pc.or_(
            pc.less(width, 19), pc.and_(pc.equal(width, 19), pc.less_equal(magnitude, limit))
        )
        return pc.cast(pc.if_else(fits, digits, pa.scalar(None, pa.string())), pa.int64())


def _parse_datetimes(kept: pa.Array) -> pa.Array:
    """ISO 8601 date-times: normalise separator and zone, then Arrow's strict cast; if any
    value fails it, each is parsed on its own: whole seconds (checking that the day and time
    exist) plus the fraction, truncated to microseconds."""
    try:  # every value already in a form Arrow reads (with a zone): no rewriting needed
        return pc.cast(kept, DATETIME_TYPE)
    except pa.ArrowInvalid:
        pass
    text = pc.replace_substring_regex(kept, r"^(.{10}) ", r"\1T")
    text = pc.replace_substring_regex(text, r"Z$", "+00:00")
    text = pc.replace_substring_regex(text, r"([+-][0-9]{2})([0-9]{2})$", r"\1:\2")
    text = pc.replace_substring_regex(text, r"T([0-9]{2}:[0-9]{2})($|[+-]|\.)", r"T\1:00\2")
    no_zone = pc.invert(
        pc.fill_null(pc.match_substring_regex(text, r"[+-][0-9]{2}:[0-9]{2}$"), True)
    )
    text = pc.if_else(no_zone, pc.binary_join_element_wise(text, "+00:00", ""), text)
    try:
        return pc.cast(text, DATETIME_TYPE)
    except pa.ArrowInvalid:
        pass
    whole = pc.replace_substring_regex(text, r"\.[0-9]+", "")
    parsed = pc.strptime(whole, format="%Y-%m-%dT%H:%M:%S%z", unit="us", error_is_null=True)
    local = pc.utf8_slice_codeunits(whole, 0, 19)
    exists = _round_trips(
        pc.strptime(local, format="%Y-%m-%dT%H:%M:%S", unit="us", error_is_null=True),
        local,
        "%Y-%m-%dT%H:%M:%S",
    )
    fraction = pc.struct_field(pc.extract_regex(text, r"\.(?P<f>[0-9]+)"), [0])
    micros = pc.utf8_slice_codeunits(pc.binary_join_element_wise(fraction, "000000", ""), 0, 6)
    micros = pc.cast(pc.fill_null(micros, "0"), pa.int64())
    parsed = pc.add(pc.cast(parsed, pa.int64()), micros)
    return pc.cast(pc.if_else(exists, parsed, None), DATETIME_TYPE)


def infer_kind(counts: dict[str, int]) -> str:
    """The kind a column of text takes: its only kind, float for integer+float, else string."""
    kinds = set(counts) - {ILL_TYPED}
    if not kinds:
        return "string"
    if len(kinds) == 1:
        return next(iter(kinds))
    if kinds <= {"integer", "float"}:
        return "float"
    return "string"
