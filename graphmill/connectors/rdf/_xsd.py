"""XSD literal values: lexical forms (Arrow strings) to typed Arrow arrays.

Pure functions over Arrow arrays, after XML Schema Part 2 (Datatypes, second edition):
whitespace facet ``collapse`` for the numeric, boolean and date types (leading and trailing
#x20 #x9 #xA #xD are allowed), then the lexical space of each type. A lexical form outside the
lexical space, or a value the column type cannot hold (an integer beyond int64, a year before 1
or after 9999), gives null and the kind ``ill-typed``.

Deliberate choices, each documented in the package docstring:

* derived integer types (``xsd:int``, ``xsd:byte``, ...) are read as integers without their
  range facets, because Oxigraph's store rewrites them to ``xsd:integer`` on load and the
  ``rdf-file`` and ``rdf-store`` kinds must agree;
* ``xsd:decimal`` becomes float64 (lossy; ``-0.0`` becomes ``0.0``, decimals have one zero);
* ``xsd:float`` is rounded to single precision (its value space), then widened to float64;
* values beyond the double range become ±INF (XSD 1.1, section 3.3.5.2);
* ``xsd:dateTime`` without a timezone offset is taken as UTC; fractions beyond microseconds
  are truncated; ``24:00:00`` is midnight of the next day (XSD Part 2, section 3.2.7);
* the timezone offset of an ``xsd:date`` is dropped (a date32 holds no offset).
"""

from __future__ import annotations

from dataclasses import dataclass

import pyarrow as pa
import pyarrow.compute as pc

from graphmill._columns import DATETIME_TYPE, KIND_TO_ARROW

XSD = "http://www.w3.org/2001/XMLSchema#"
RDF = "http://www.w3.org/1999/02/22-rdf-syntax-ns#"
XSD_STRING = XSD + "string"
RDF_LANG_STRING = RDF + "langString"
ILL_TYPED = "ill-typed"

INTEGER_TYPES = tuple(
    XSD + name
    for name in (
        "integer", "long", "int", "short", "byte", "nonNegativeInteger", "positiveInteger",
        "nonPositiveInteger", "negativeInteger", "unsignedLong", "unsignedInt",
        "unsignedShort", "unsignedByte",
    )
)  # fmt: skip
#: datatype IRI -> how its lexical forms are read; anything else is read as a string.
FAMILIES: dict[str, str] = {
    **dict.fromkeys(INTEGER_TYPES, "integer"),
    XSD + "decimal": "decimal",
    XSD + "double": "double",
    XSD + "float": "float",
    XSD + "boolean": "boolean",
    XSD + "dateTime": "dateTime",
    XSD + "dateTimeStamp": "dateTimeStamp",
    XSD + "date": "date",
}
FAMILY_KIND = {
    "integer": "integer",
    "decimal": "float",
    "double": "float",
    "float": "float",
    "boolean": "boolean",
    "dateTime": "datetime",
    "dateTimeStamp": "datetime",
    "date": "date",
}

_XSD_SPACE = " \t\n\r"
_INT = r"^[+-]?[0-9]+$"
_DECIMAL = r"^[+-]?([0-9]+(\.[0-9]*)?|\.[0-9]+)$"
_DOUBLE = r"^[+-]?([0-9]+(\.[0-9]*)?|\.[0-9]+)([eE][+-]?[0-9]+)?$"
_SPECIAL = {"INF": float("inf"), "+INF": float("inf"), "-INF": float("-inf"), "NaN": float("nan")}
_TZ = r"(?P<tz>Z|[+-][0-9]{2}:[0-9]{2})?"
_DATE = r"(?P<date>[0-9]{4}-[0-9]{2}-[0-9]{2})"
_DATETIME = rf"^{_DATE}T(?P<time>[0-9]{{2}}:[0-9]{{2}}:[0-9]{{2}})(?P<frac>\.[0-9]+)?{_TZ}$"
_DATE_ONLY = rf"^{_DATE}{_TZ}$"
_INT64_MAX = "9223372036854775807"
_INT64_MIN_ABS = "9223372036854775808"


def collapse(lexical: pa.Array) -> pa.Array:
    """Apply the ``collapse`` whitespace facet as far as typed values need it (trim)."""
    return pc.utf8_trim(lexical, characters=_XSD_SPACE)


def _null_unless(valid: pa.Array, values: pa.Array) -> pa.Array:
    return pc.if_else(valid, values, pa.scalar(None, values.type))


def parse_integer(lexical: pa.Array) -> pa.Array:
    """xsd:integer (and derived types) -> int64; null when ill-typed or beyond int64."""
    text = collapse(lexical)
    ok = pc.fill_null(pc.match_substring_regex(text, _INT), False)
    negative = pc.fill_null(pc.starts_with(text, "-"), False)
    digits = pc.replace_substring_regex(pc.utf8_ltrim(text, characters="+-"), "^0+([0-9])", r"\1")
    width = pc.utf8_length(digits)
    limit = pc.if_else(negative, _INT64_MIN_ABS, _INT64_MAX)
    fits = pc.or_(pc.less(width, 19), pc.and_(pc.equal(width, 19), pc.less_equal(digits, limit)))
    ok = pc.and_(ok, pc.fill_null(fits, False))
    signed = pc.binary_join_element_wise(pc.if_else(negative, "-", ""), digits, "")
    # The int64 minimum has no positive counterpart, so cast the signed text directly.
    values = pc.cast(pc.if_else(ok, signed, "0"), pa.int64())
    return _null_unless(ok, values)


def parse_decimal(lexical: pa.Array) -> pa.Array:
    """xsd:decimal -> float64 (lossy); decimals have a single zero, so ``-0.0`` is 0.0."""
    text = collapse(lexical)
    ok = pc.fill_null(pc.match_substring_regex(text, _DECIMAL), False)
    values = pc.add(pc.cast(pc.if_else(ok, text, "0"), pa.float64()), 0.0)
    return _null_unless(ok, values)


def parse_double(lexical: pa.Array, *, single: bool = False) -> pa.Array:
    """xsd:double (or xsd:float when ``single``) -> float64, with INF, -INF and NaN."""
    text = collapse(lexical)
    numeric = pc.fill_null(pc.match_substring_regex(text, _DOUBLE), False)
    special = pc.fill_null(pc.is_in(text, value_set=pa.array(list(_SPECIAL))), False)
    values = pc.cast(pc.if_else(numeric, text, "0"), pa.float64())
    specials = pc.take(
        pa.array(list(_SPECIAL.values()), pa.float64()),
        pc.index_in(text, value_set=pa.array(list(_SPECIAL))),
    )
    values = pc.if_else(special, specials, values)
    if single:
        values = pc.cast(pc.cast(values, pa.float32(), safe=False), pa.float64())
    return _null_unless(pc.or_(numeric, special), values)


def parse_boolean(lexical: pa.Array) -> pa.Array:
    """xsd:boolean: ``true``, ``false``, ``1``, ``0`` -> bool."""
    index = pc.index_in(collapse(lexical), value_set=pa.array(["false", "true", "0", "1"]))
    truth = pc.is_in(index, value_set=pa.array([1, 3], pa.int32()))
    return _null_unless(pc.is_valid(index), truth)


def _offset_minutes(tz: pa.Array) -> tuple[pa.Array, pa.Array]:
    """(valid, minutes east of UTC) for ``Z``, ``+hh:mm``, ``-hh:mm`` or ``""`` (none)."""
    present = pc.greater(pc.utf8_length(tz), 1)
    sign = pc.if_else(pc.starts_with(tz, "-"), -1, 1)
    hours = pc.cast(pc.if_else(present, pc.utf8_slice_codeunits(tz, 1, 3), "0"), pa.int64())
    minutes = pc.cast(pc.if_else(present, pc.utf8_slice_codeunits(tz, 4, 6), "0"), pa.int64())
    valid = pc.and_(
        pc.less_equal(minutes, 59),
        pc.or_(pc.less(hours, 14), pc.and_(pc.equal(hours, 14), pc.equal(minutes, 0))),
    )
    total = pc.multiply(sign, pc.add(pc.multiply(hours, 60), minutes))
    return valid, total


def _calendar(stamp_text: pa.Array, fmt: str) -> tuple[pa.Array, pa.Array]:
    """Parse with ``fmt``; valid only where formatting back gives the same text (no Feb 30)."""
    stamps = pc.strptime(stamp_text, format=fmt, unit="s", error_is_null=True)
    same = pc.equal(pc.strftime(stamps, format=fmt), stamp_text)
    return pc.fill_null(same, False), pc.cast(stamps, pa.timestamp("us"))


def parse_datetime(lexical: pa.Array, *, require_offset: bool = False) -> pa.Array:
    """xsd:dateTime -> timestamp[us, UTC]; offsets applied, no offset taken as UTC."""
    parts = pc.extract_regex(collapse(lexical), _DATETIME)
    matched = pc.fill_null(pc.is_valid(parts), False)
    date, time = pc.struct_field(parts, "date"), pc.struct_field(parts, "time")
    frac, tz = pc.struct_field(parts, "frac"), pc.struct_field(parts, "tz")
    digits = pc.utf8_slice_codeunits(pc.binary_join_element_wise(frac, "0000000", ""), 1, 7)
    end_of_day = pc.and_(pc.equal(time, "24:00:00"), pc.equal(pc.cast(digits, pa.int64()), 0))
    clock = pc.if_else(end_of_day, "00:00:00", time)
    text = pc.binary_join_element_wise(date, clock, "T")
    calendar_ok, stamps = _calendar(
        pc.if_else(matched, text, "2000-01-01T00:00:00"), "%Y-%m-%dT%H:%M:%S"
    )
    offset_ok, minutes = _offset_minutes(tz)
    micros = pc.add(pc.cast(digits, pa.int64()), pc.if_else(end_of_day, 86_400_000_000, 0))
    micros = pc.subtract(micros, pc.multiply(minutes, 60_000_000))
    stamps = pc.add(stamps, pc.cast(micros, pa.duration("us")))
    valid = pc.and_(pc.and_(matched, calendar_ok), offset_ok)
    if require_offset:
        valid = pc.and_(valid, pc.greater(pc.utf8_length(tz), 0))
    return _null_unless(valid, pc.cast(stamps, DATETIME_TYPE))


def parse_date(lexical: pa.Array) -> pa.Array:
    """xsd:date -> date32 (the calendar date as written; any offset is dropped)."""
    parts = pc.extract_regex(collapse(lexical), _DATE_ONLY)
    matched = pc.fill_null(pc.is_valid(parts), False)
    date = pc.if_else(matched, pc.struct_field(parts, "date"), "2000-01-01")
    calendar_ok, stamps = _calendar(date, "%Y-%m-%d")
    offset_ok, _ = _offset_minutes(pc.struct_field(parts, "tz"))
    valid = pc.and_(pc.and_(matched, calendar_ok), offset_ok)
    return _null_unless(valid, pc.cast(stamps, pa.date32()))


_PARSERS = {
    "integer": parse_integer,
    "decimal": parse_decimal,
    "double": parse_double,
    "float": lambda lex: parse_double(lex, single=True),
    "boolean": parse_boolean,
    "dateTime": parse_datetime,
    "dateTimeStamp": lambda lex: parse_datetime(lex, require_offset=True),
    "date": parse_date,
}


@dataclass(frozen=True)
class LiteralValues:
    """Typed values of a column of literals.

    ``kinds`` holds each row's value kind (``integer``, ``float``, ``boolean``, ``datetime``,
    ``date``, ``string`` or ``ill-typed``); ``values[kind]`` is a full-length array of that
    kind's Arrow type, null in rows of other kinds.
    """

    kinds: pa.Array
    values: dict[str, pa.Array]


def literal_values(lexical: pa.Array, datatype: pa.Array) -> LiteralValues:
    """Read literals (lexical form, datatype IRI) as typed values; see the module doc."""
    lexical = lexical.combine_chunks() if isinstance(lexical, pa.ChunkedArray) else lexical
    datatype = datatype.combine_chunks() if isinstance(datatype, pa.ChunkedArray) else datatype
    n = len(lexical)
    family_names = sorted(set(FAMILIES.values()))
    family_of = pa.array([family_names.index(FAMILIES[d]) for d in FAMILIES], pa.int32())
    position = pc.index_in(datatype, value_set=pa.array(list(FAMILIES)))
    family = pc.take(family_of, position)
    kinds = pc.if_else(pc.is_null(family), "string", pa.scalar(None, pa.string()))
    values: dict[str, pa.Array] = {"string": _null_unless(pc.is_null(family), lexical)}
    for code, name in enumerate(family_names):
        mask = pc.fill_null(pc.equal(family, code), False)
        hits = pc.sum(mask).as_py() or 0
        if not hits:
            continue
        parsed = _PARSERS[name](lexical.filter(mask))
        kind = FAMILY_KIND[name]
        placed = pc.replace_with_mask(pa.nulls(n, parsed.type), mask, parsed)
        label = pc.if_else(pc.is_valid(parsed), kind, ILL_TYPED)
        kinds = pc.replace_with_mask(kinds, mask, label)
        if kind in values:
            values[kind] = pc.coalesce(values[kind], placed)
        else:
            values[kind] = placed
    return LiteralValues(
        kinds=kinds, values={k: v.cast(KIND_TO_ARROW[k]) for k, v in values.items()}
    )
