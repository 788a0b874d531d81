"""XSD literal typing, case by case from XML Schema Part 2 and RDF 1.1 Concepts.

Section numbers are those of "XML Schema Part 2: Datatypes Second Edition" (W3C, 2004) unless
marked XSD 1.1; every lexical example below is quoted from memory of the named section.
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pyarrow as pa
import pytest

from graphmill.connectors.rdf._mapping import typed_values
from graphmill.connectors.rdf._xsd import RDF_LANG_STRING, XSD, literal_values

UTC = dt.UTC


def read(lexical: str, datatype: str) -> tuple[str, object]:
    """(value kind, Python value) of one literal."""
    result = literal_values(pa.array([lexical]), pa.array([XSD + datatype]))
    kind = result.kinds[0].as_py()
    return kind, (result.values[kind][0].as_py() if kind in result.values else None)


# (lexical form, datatype, expected kind, expected value, source)
CASES = [
    # 3.3.13.1 integer: "-1, 0, 12678967543233, +100000"
    ("-1", "integer", "integer", -1, "3.3.13.1"),
    ("0", "integer", "integer", 0, "3.3.13.1"),
    ("12678967543233", "integer", "integer", 12678967543233, "3.3.13.1"),
    ("+100000", "integer", "integer", 100000, "3.3.13.1"),
    # 3.3.16 long: maxInclusive 9223372036854775807, minInclusive -9223372036854775808
    ("9223372036854775807", "long", "integer", 9223372036854775807, "3.3.16"),
    ("-9223372036854775808", "long", "integer", -9223372036854775808, "3.3.16"),
    # 3.3.17.1 int "-1, 0, 126789675, +100000"; 3.3.18.1 short; 3.3.19.1 byte "+100"
    ("126789675", "int", "integer", 126789675, "3.3.17.1"),
    ("12678", "short", "integer", 12678, "3.3.18.1"),
    ("+100", "byte", "integer", 100, "3.3.19.1"),
    # 3.3.20.1 nonNegativeInteger "1, 0, 12678967543233, +100000"
    ("12678967543233", "nonNegativeInteger", "integer", 12678967543233, "3.3.20.1"),
    # 3.2.3.1 decimal: "-1.23, 12678967.543233, +100000.00, 210"
    ("-1.23", "decimal", "float", -1.23, "3.2.3.1"),
    ("12678967.543233", "decimal", "float", 12678967.543233, "3.2.3.1"),
    ("+100000.00", "decimal", "float", 100000.0, "3.2.3.1"),
    ("210", "decimal", "float", 210.0, "3.2.3.1"),
    # 3.2.5.1 double: "-1E4, 1267.43233E12, 12.78e-2, 12 , -0, 0 and INF"
    ("-1E4", "double", "float", -1e4, "3.2.5.1"),
    ("1267.43233E12", "double", "float", 1267.43233e12, "3.2.5.1"),
    ("12.78e-2", "double", "float", 0.1278, "3.2.5.1"),
    ("12", "double", "float", 12.0, "3.2.5.1"),
    ("0", "double", "float", 0.0, "3.2.5.1"),
    ("INF", "double", "float", math.inf, "3.2.5.1"),
    ("-INF", "double", "float", -math.inf, "3.2.5 (value space)"),
    # 3.2.2.1 boolean: {true, false, 1, 0}
    ("true", "boolean", "boolean", True, "3.2.2.1"),
    ("false", "boolean", "boolean", False, "3.2.2.1"),
    ("1", "boolean", "boolean", True, "3.2.2.1"),
    ("0", "boolean", "boolean", False, "3.2.2.1"),
    # 3.2.7.3: 2002-10-10T12:00:00-05:00 is 2002-10-10T17:00:00Z
    (
        "2002-10-10T12:00:00-05:00",
        "dateTime",
        "datetime",
        dt.datetime(2002, 10, 10, 17, tzinfo=UTC),
        "3.2.7.3",
    ),
    (
        "2002-10-10T17:00:00Z",
        "dateTime",
        "datetime",
        dt.datetime(2002, 10, 10, 17, tzinfo=UTC),
        "3.2.7.3",
    ),
    # 3.2.7.1: no timezone -- graphmill takes it as UTC (documented choice)
    (
        "2002-10-10T12:00:00",
        "dateTime",
        "datetime",
        dt.datetime(2002, 10, 10, 12, tzinfo=UTC),
        "3.2.7.1",
    ),
    # 3.2.7.1: fractional seconds; '24:00:00' is the first instant of the next day
    (
        "2002-10-10T12:00:00.5Z",
        "dateTime",
        "datetime",
        dt.datetime(2002, 10, 10, 12, 0, 0, 500000, tzinfo=UTC),
        "3.2.7.1",
    ),
    (
        "1999-12-31T24:00:00Z",
        "dateTime",
        "datetime",
        dt.datetime(2000, 1, 1, tzinfo=UTC),
        "3.2.7.1",
    ),
    # 3.2.7.3: offsets range over -14:00..+14:00
    (
        "2000-01-01T00:00:00+14:00",
        "dateTime",
        "datetime",
        dt.datetime(1999, 12, 31, 10, tzinfo=UTC),
        "3.2.7.3",
    ),
    # 3.2.9 date
    ("2002-10-10", "date", "date", dt.date(2002, 10, 10), "3.2.9.1"),
    ("2002-10-10Z", "date", "date", dt.date(2002, 10, 10), "3.2.9.1 (offset dropped: documented)"),
    ("2000-02-29", "date", "date", dt.date(2000, 2, 29), "3.2.7.1 / Gregorian leap year"),
    # 4.3.6 whiteSpace: collapse for the non-string types (leading, trailing spaces allowed)
    ("  42\n", "integer", "integer", 42, "4.3.6"),
    ("\ttrue ", "boolean", "boolean", True, "4.3.6"),
    (" 2002-10-10 ", "date", "date", dt.date(2002, 10, 10), "4.3.6"),
    # 3.2.1 string: kept as written, whitespace included (whiteSpace preserve)
    ("  a b  ", "string", "string", "  a b  ", "3.2.1"),
    # any other datatype: its lexical form as a string (graphmill's rule)
    ("PT1H", "duration", "string", "PT1H", "3.2.6 duration: not typed by graphmill"),
]
# RDF 1.1 Concepts, section 3.3 (from memory): a literal whose lexical form is not in the
# lexical space of its datatype is ill-typed.
ILL_TYPED = [
    ("abc", "integer", "3.3.13.1: digits only"),
    ("1.5", "integer", "3.3.13.1: no fraction"),
    ("1 000", "integer", "4.3.6: collapse keeps inner spaces, which are not digits"),
    ("0x10", "integer", "3.3.13.1"),
    ("9223372036854775808", "integer", "beyond int64 (graphmill: not representable)"),
    ("1.5e3", "decimal", "3.2.3.1: no exponent in a decimal"),
    ("inf", "double", "3.2.5.1: only INF, -INF, NaN"),
    ("1.0e", "double", "3.2.5.1"),
    ("yes", "boolean", "3.2.2.1"),
    ("TRUE", "boolean", "3.2.2.1: case matters"),
    ("2002-02-30", "date", "3.2.9: no 30 February"),
    ("2001-02-29", "date", "3.2.9: 2001 is not a leap year"),
    ("2002-10-10T25:00:00Z", "dateTime", "3.2.7.1: hour 0-23 (or 24:00:00)"),
    ("2002-10-10T24:00:01Z", "dateTime", "3.2.7.1: 24 only as 24:00:00"),
    ("2002-10-10T12:00:00+15:00", "dateTime", "3.2.7.3: offset beyond 14:00"),
    ("2002-10-10 12:00:00Z", "dateTime", "3.2.7.1: the T is required"),
    ("2002-1-10", "date", "3.2.9.1: two-digit month"),
    ("-0044-03-15", "date", "valid XSD, but before year 1 (graphmill: not representable)"),
]


@pytest.mark.parametrize(("lexical", "datatype", "kind", "value", "source"), CASES)
def test_lexical_examples(lexical, datatype, kind, value, source):
    assert read(lexical, datatype) == (kind, value), source


@pytest.mark.parametrize(("lexical", "datatype", "source"), ILL_TYPED)
def test_ill_typed_literals_are_null(lexical, datatype, source):
    assert read(lexical, datatype) == ("ill-typed", None), source


def test_nan_and_negative_zero():
    # 3.2.5.1 (double) lists NaN and -0 among the lexical examples.
    kind, value = read("NaN", "double")
    assert kind == "float" and math.isnan(value)
    kind, value = read("-0", "double")
    assert kind == "float" and value == 0.0 and math.copysign(1.0, value) == -1.0
    # 3.2.3 decimal: the value space has a single zero.
    kind, value = read("-0.0", "decimal")
    assert math.copysign(1.0, value) == 1.0


def test_float_has_single_precision():
    # 3.2.4 float: IEEE single-precision; 16777217 = 2**24 + 1 is not representable.
    assert read("16777217", "float") == ("float", 16777216.0)
    assert read("16777217", "double") == ("float", 16777217.0)
    single = read("1.1", "float")[1]
    assert single != 1.1 and single == pytest.approx(1.1, rel=1e-7)
    assert single == float(np.float32(1.1))


def test_fractions_beyond_microseconds_are_truncated():
    # 3.2.7.1 allows any number of fraction digits; timestamp[us] keeps six.
    assert read("2002-10-10T12:00:00.1234567Z", "dateTime")[1] == dt.datetime(
        2002, 10, 10, 12, 0, 0, 123456, tzinfo=UTC
    )


def test_strings_and_language_strings():
    result = literal_values(pa.array(["a", "b"]), pa.array([XSD + "string", RDF_LANG_STRING]))
    assert result.kinds.to_pylist() == ["string", "string"]
    assert result.values["string"].to_pylist() == ["a", "b"]


def test_one_column_type_for_mixed_kinds():
    ints_floats = typed_values(pa.array(["1", "2.5"]), pa.array([XSD + "integer", XSD + "decimal"]))
    assert ints_floats[0].type == pa.float64() and ints_floats[0].to_pylist() == [1.0, 2.5]
    mixed = typed_values(
        pa.array(["1", "x", "2002-10-10", "abc"]),
        pa.array([XSD + "integer", XSD + "string", XSD + "date", XSD + "integer"]),
    )
    assert mixed[0].to_pylist() == ["1", "x", "2002-10-10", None]
    assert mixed[1].to_pylist() == ["integer", "string", "date", "ill-typed"]
