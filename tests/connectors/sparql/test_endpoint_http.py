"""The SPARQL 1.1 Protocol as sent: GET for short queries, POST for long ones or when asked,
a form POST when the server refuses a direct one, content negotiation, and TLS settings.
The endpoint is a small real HTTP(S) server on 127.0.0.1 that records what it receives."""

from __future__ import annotations

import shutil
import subprocess

import pytest
from sparql_fakes import RecordingEndpoint
from sparql_helpers import FAST_RETRIES, endpoint, pull_spec, small_spec_doc

from graphmill.errors import SourceUnavailableError, SpecError

# SPARQL 1.1 Protocol, section 2.1: query via GET, via URL-encoded POST, via POST directly
DIRECT = "application/sparql-query"
FORM = "application/x-www-form-urlencoded"
TSV = "text/tab-separated-values"  # SPARQL 1.1 Query Results CSV and TSV Formats, 4


def _selects(server: RecordingEndpoint) -> list[tuple[str, str, str, str]]:
    return [r for r in server.requests if not r[3].lstrip().upper().startswith("ASK")]


def test_short_queries_go_by_get_and_ask_for_tsv(tmp_path):
    with RecordingEndpoint() as server:
        pull_spec(small_spec_doc(endpoint(server.url), tmp_path))
    selects = _selects(server)
    assert selects and all(m == "GET" and a == TSV for m, _, a, _ in selects)


def test_long_queries_go_by_post(tmp_path):
    with RecordingEndpoint() as server:
        doc = small_spec_doc(endpoint(server.url), tmp_path)
        # a vertex type declared after many others carries a long FILTER NOT EXISTS list
        for i in range(60):
            doc["vertex_types"][f"other{i}"] = {"match": f"ex:SomeRatherLongClassName{i}"}
        pull_spec(doc)
    methods = {m: ct for m, ct, _, q in _selects(server) if "SomeRatherLongClassName59" in q}
    assert methods.get("POST", "").startswith(DIRECT)
    assert any(m == "GET" for m, *_ in _selects(server))  # the short ones still go by GET


@pytest.mark.parametrize(("method", "expected"), [("get", "GET"), ("post", "POST")])
def test_the_method_option_is_obeyed(tmp_path, method, expected):
    with RecordingEndpoint() as server:
        pull_spec(small_spec_doc(endpoint(server.url, method=method), tmp_path))
    assert {m for m, *_ in server.requests} == {expected}


def test_a_refused_direct_post_falls_back_to_a_form(tmp_path):
    with RecordingEndpoint(refuse_direct_post=True) as server:
        pull_spec(small_spec_doc(endpoint(server.url, method="post"), tmp_path))
    kinds = [ct.split(";")[0] for _, ct, _, _ in server.requests]
    assert DIRECT in kinds and FORM in kinds
    assert kinds.count(DIRECT) == kinds.count(FORM)  # each refused one was sent again


def test_json_results_are_asked_for(tmp_path):
    with RecordingEndpoint() as server:
        _, info = pull_spec(small_spec_doc(endpoint(server.url, results_format="json"), tmp_path))
    assert {a for _, _, a, _ in _selects(server)} == {"application/sparql-results+json"}
    assert info.vertex_counts == {"thing": 0}


@pytest.fixture(scope="module")
def certificate(tmp_path_factory) -> tuple[str, str]:
    """A self-signed certificate for 127.0.0.1, made with the openssl command."""
    if shutil.which("openssl") is None:
        pytest.skip("no openssl command to make a test certificate")
    root = tmp_path_factory.mktemp("tls")
    cert, key = root / "cert.pem", root / "key.pem"
    subprocess.run(
        [
            "openssl",
            "req",
            "-x509",
            "-newkey",
            "rsa:2048",
            "-nodes",
            "-days",
            "2",
            "-subj",
            "/CN=127.0.0.1",
            "-addext",
            "subjectAltName=IP:127.0.0.1",
            "-keyout",
            str(key),
            "-out",
            str(cert),
        ],
        check=True,
        capture_output=True,
    )
    return str(cert), str(key)


def test_an_untrusted_certificate_is_refused_at_once(tmp_path, certificate):
    with RecordingEndpoint(tls=certificate) as server:
        source = endpoint(server.url, retries=FAST_RETRIES)
        with pytest.raises(SourceUnavailableError, match="TLS certificate was not accepted") as e:
            pull_spec(small_spec_doc(source, tmp_path))
    assert e.value.exit_code == 3 and "ca_file" in e.value.one_line()
    assert server.requests == []  # not retried


@pytest.mark.parametrize("tls", ["ca_file", "no-verify"])
def test_tls_settings(tmp_path, certificate, tls):
    option = {"ca_file": certificate[0]} if tls == "ca_file" else {"verify": False}
    with RecordingEndpoint(tls=certificate) as server:
        _, info = pull_spec(small_spec_doc(endpoint(server.url, tls=option), tmp_path))
    assert info.vertex_counts == {"thing": 0} and _selects(server)


def test_a_missing_ca_file_is_a_spec_error(tmp_path):
    source = endpoint("https://127.0.0.1:9/q", tls={"ca_file": str(tmp_path / "none.pem")})
    with pytest.raises(SpecError, match="CA file"):
        pull_spec(small_spec_doc(source, tmp_path))
