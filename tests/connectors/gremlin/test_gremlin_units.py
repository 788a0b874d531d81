"""The gremlin source's pure parts, without a server: settings, cursors, values, errors,
traversal building."""

from __future__ import annotations

import datetime as dt
import ssl
import uuid

import pyarrow as pa
import pytest
from gremlin_helpers import MODERN_TYPES, gremlin_spec
from gremlin_python.driver.protocol import ConfigurationError, GremlinServerError
from gremlin_python.statics import BigDecimal
from hypothesis import given, settings
from hypothesis import strategies as st

import graphmill.connectors.gremlin as package
from graphmill._columns import conform, unify_types
from graphmill.connectors.gremlin import GremlinSettings, _cursor, _traversals
from graphmill.connectors.gremlin._errors import as_graphmill_error, is_transient
from graphmill.connectors.gremlin._values import id_strings, mixed_values, property_array
from graphmill.errors import ExitCode, InputError, SpecError

URL = "ws://127.0.0.1:8182/gremlin"


def test_exports_are_sorted_and_resolve():
    assert package.__all__ == sorted(package.__all__)
    assert all(getattr(package, name) for name in package.__all__)


# -- settings ---------------------------------------------------------------------------


def test_url_with_credentials_is_refused_without_echoing_them(tmp_path):
    with pytest.raises(SpecError) as caught:
        GremlinSettings.from_spec(
            gremlin_spec(tmp_path, "ws://ada:s3cret-pw@127.0.0.1:8182/gremlin", MODERN_TYPES, [])
        )
    assert caught.value.key_path == "source.url"
    assert "s3cret-pw" not in str(caught.value) and "ada" not in str(caught.value)


def _settings(tmp_path, **source):
    return GremlinSettings.from_spec(gremlin_spec(tmp_path, URL, MODERN_TYPES, [], **source))


def test_url_with_credentials_refused_by_the_source(tmp_path):
    spec = gremlin_spec(tmp_path, "wss://ada:pw@host:8182/gremlin", MODERN_TYPES, [])
    with pytest.raises(SpecError, match="must not contain a user name or password"):
        GremlinSettings.from_spec(spec)


def test_tls_settings_need_wss_and_an_existing_ca_file(tmp_path):
    with pytest.raises(SpecError, match="wss://"):
        _settings(tmp_path, tls={"verify": True})
    spec = gremlin_spec(tmp_path, "wss://h:1/gremlin", MODERN_TYPES, [], tls={"ca_file": "no.pem"})
    with pytest.raises(SpecError) as caught:
        GremlinSettings.from_spec(spec)
    assert caught.value.key_path == "source.tls.ca_file"


def test_credentials_come_only_from_the_named_variables(tmp_path, monkeypatch):
    monkeypatch.setenv("GM_U", "ada")
    monkeypatch.delenv("GM_P", raising=False)
    settings_ = _settings(tmp_path, username_env="GM_U", password_env="GM_P")
    with pytest.raises(Exception) as caught:
        settings_.credentials()
    assert caught.value.exit_code == ExitCode.AUTH_REFUSED and "GM_P" in str(caught.value)
    monkeypatch.setenv("GM_P", "pw-value")
    assert settings_.credentials() == ("ada", "pw-value")
    assert "pw-value" not in repr(settings_)
    with pytest.raises(SpecError):
        _settings(tmp_path, username_env="GM_U")


def test_tls_verification_is_on_unless_switched_off(tmp_path):
    on = GremlinSettings.from_spec(gremlin_spec(tmp_path, "wss://h:1/gremlin", MODERN_TYPES, []))
    context = on.ssl_context()
    assert context.verify_mode == ssl.CERT_REQUIRED and context.check_hostname
    off = GremlinSettings.from_spec(
        gremlin_spec(tmp_path, "wss://h:1/gremlin", MODERN_TYPES, [], tls={"verify": False})
    )
    assert off.ssl_context().verify_mode == ssl.CERT_NONE
    assert _settings(tmp_path).ssl_context() is None


# -- cursors ----------------------------------------------------------------------------

ids = st.one_of(
    st.integers(min_value=-(2**63), max_value=2**63 - 1), st.text(max_size=20), st.uuids()
)


@given(after=ids, rows=st.integers(min_value=0, max_value=10**9), low=st.none() | ids)
def test_cursor_round_trip(after, rows, low):
    state = _cursor.CursorState(after=after, rows=rows, low=low, high=None)
    assert _cursor.decode(_cursor.encode(state), None) == state


def test_cursor_keeps_number_and_string_ids_apart():
    number = _cursor.encode(_cursor.CursorState(7, 1, None, None))
    text = _cursor.encode(_cursor.CursorState("7", 1, None, None))
    assert number != text
    assert _cursor.decode(number, None).after == 7 and _cursor.decode(text, None).after == "7"


def test_a_foreign_checkpoint_is_a_clear_error():
    with pytest.raises(InputError, match="not a gremlin cursor"):
        _cursor.decode('{"offset": 3}', None)


# -- values -----------------------------------------------------------------------------


def test_integers_and_floats_meet_in_float64_with_both_counted():
    array, kinds = property_array([[1], [2.5], [], [3]], multi=False)
    assert array.type == pa.float64() and array.to_pylist() == [1.0, 2.5, None, 3.0]
    assert kinds == {"float": 1, "integer": 2}


def test_one_kind_needs_no_profile():
    array, kinds = property_array([[True], [False], []], multi=False)
    assert array.type == pa.bool_() and kinds is None


def test_booleans_never_turn_into_numbers():
    array, kinds = property_array([[3.5], [True]], multi=False)
    assert array.to_pylist() == ["3.5", "true"] and kinds == {"boolean": 1, "float": 1}


def test_big_decimals_become_floats_only_when_exact():
    # Python's float repr is the shortest string that reads back as the same double
    # (IEEE 754 binary64): 2.5 and 0.1 are such strings, 0.1000000000000000000001 is not
    safe, kinds = property_array([[BigDecimal(1, 25)], [BigDecimal(1, 1)]], multi=False)
    assert safe.type == pa.float64() and safe.to_pylist() == [2.5, 0.1] and kinds is None
    exact, kinds = property_array([[BigDecimal(22, 10**21 + 1)]], multi=False)
    assert exact.to_pylist() == ["0.1000000000000000000001"] and kinds == {"float": 1}


def test_datetimes_in_utc_whatever_their_offset():
    naive = dt.datetime(2020, 1, 1, 12, 0)  # gremlinpython's java.util.Date: naive UTC
    plus2 = dt.datetime(2020, 1, 1, 14, 0, tzinfo=dt.timezone(dt.timedelta(hours=2)))
    array, _ = property_array([[naive], [plus2]], multi=False)
    assert array.type == pa.timestamp("us", tz="UTC")
    assert array.to_pylist() == [dt.datetime(2020, 1, 1, 12, 0, tzinfo=dt.UTC)] * 2


def test_multi_values_are_sorted_and_empty_is_null():
    array, _ = property_array([["b", "a"], [], ["c"]], multi=True)
    assert array.to_pylist() == [["a", "b"], None, ["c"]]


def test_ids_of_several_types_in_one_label_are_refused():
    assert id_strings([1, 20, 3], what="x").to_pylist() == ["1", "20", "3"]
    assert id_strings([uuid.UUID(int=1)], what="x").to_pylist() == [str(uuid.UUID(int=1))]
    with pytest.raises(InputError, match="several types"):
        id_strings([1, "a"], what="vertices person")


scalars = st.one_of(
    st.integers(min_value=-(2**63), max_value=2**63 - 1),
    st.floats(allow_nan=False),
    st.booleans(),
    st.text(max_size=5),
    st.datetimes(min_value=dt.datetime(1900, 1, 1), max_value=dt.datetime(2100, 1, 1)),
)


@settings(max_examples=200, deadline=None)
@given(
    rows=st.lists(st.lists(scalars, max_size=1), min_size=1, max_size=30), cut=st.integers(1, 29)
)
def test_paging_does_not_change_the_column(rows, cut):
    """One page, or two pages unified as the snapshot unifies them: the same values."""
    whole, _ = property_array(rows, multi=False)
    parts = [property_array(rows[:cut], multi=False)[0], property_array(rows[cut:], multi=False)[0]]
    parts = [p for p in parts if len(p)]
    target = unify_types([whole.type, *(p.type for p in parts)])
    joined = pa.concat_arrays([conform(p, target) for p in parts])
    assert conform(whole, target).equals(joined)


@given(st.lists(scalars, max_size=40))
def test_kind_counts_add_up(values):
    array, kinds = mixed_values(values)
    assert len(array) == len(values)
    if kinds is not None:
        assert sum(kinds.values()) == len(values)


# -- errors -----------------------------------------------------------------------------


def _server_error(code, message="x"):
    return GremlinServerError({"code": code, "message": message, "attributes": {}})


@pytest.mark.parametrize(
    ("exc", "exit_code", "transient"),
    [
        (_server_error(598), ExitCode.SOURCE_TIMEOUT, True),
        (_server_error(401), ExitCode.AUTH_REFUSED, False),
        (
            _server_error(500, "Server disconnected - please try to reconnect"),
            ExitCode.SOURCE_UNREADABLE,
            True,
        ),
        (
            _server_error(597, "The provided traverser does not map to a value"),
            ExitCode.SOURCE_SERVER_ERROR,
            False,
        ),
        (ConfigurationError("needs credentials"), ExitCode.AUTH_REFUSED, False),
        (ConnectionRefusedError(111, "Connection refused"), ExitCode.SOURCE_UNREADABLE, True),
        (RuntimeError("Connection was closed by server."), ExitCode.SOURCE_UNREADABLE, True),
        (TimeoutError(), ExitCode.SOURCE_TIMEOUT, True),
        (ValueError("133 is not a valid DataType"), ExitCode.MALFORMED_RESPONSE, False),
    ],
)
def test_driver_errors_map_to_one_line_graphmill_errors(tmp_path, exc, exit_code, transient):
    ours = as_graphmill_error(exc, _settings(tmp_path))
    assert ours.exit_code == exit_code
    assert is_transient(exc) is transient
    assert "\n" not in str(ours) and str(ours).startswith(URL)


# -- traversals -------------------------------------------------------------------------


def test_spec_strings_travel_as_arguments_never_as_script():
    hostile = "person').drop();g.V('"
    scope = _traversals.Scope(edges=False, label=hostile)
    traversal = _traversals.rows(scope, [hostile], [])
    steps = traversal.bytecode.step_instructions
    assert ["hasLabel", hostile] in steps
    text = _traversals.render(traversal, "g")
    assert "hasLabel(\"person').drop();g.V('\")" in text  # quoted: audit text, not sent


def test_rows_continue_after_the_cursor_within_the_partition():
    scope = _traversals.Scope(
        edges=True, label="e", out_label="a", in_label="b", low=5, high=3_000_000_000
    )
    text = _traversals.render(_traversals.rows(scope, ["w"], [], after=7), "g")
    assert "has(T.id,gt(7)).has(T.id,lt(3000000000))" in text
    assert "gte(" not in text  # the cursor supersedes the lower bound
