"""Endpoint failures give one clear line and their own exit code, through ``graphmill pull``.

The faulty endpoints are tiny ``http.server`` instances on 127.0.0.1 (see ``fakes.py``); the
exit codes are those of docs/decisions/0001-architecture.md, read from the error classes.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from sparql_fakes import FaultyEndpoint
from sparql_helpers import FAST_RETRIES, endpoint, small_spec_doc, write_spec

from graphmill.cli import main
from graphmill.errors import (
    AuthenticationError,
    MalformedResponseError,
    SourceServerError,
    SourceTimeoutError,
    SourceUnavailableError,
)

CASES = [
    ("503", SourceServerError, "HTTP 503"),
    ("401", AuthenticationError, "refused the credentials"),
    ("not-tsv", MalformedResponseError, "not a TSV results header"),
    ("extra-cell", MalformedResponseError, "not a TSV results table"),
    ("html", MalformedResponseError, "content type 'text/html'"),
    ("slow", SourceTimeoutError, "did not answer within request_timeout_s"),
]


def _pull(
    tmp_path: Path, url: str, capsys: pytest.CaptureFixture[str], **options: object
) -> tuple[int, str]:
    source = endpoint(url, retries=FAST_RETRIES, request_timeout_s=1, **options)
    spec = write_spec(tmp_path / "spec.yaml", small_spec_doc(source, tmp_path))
    code = main(["pull", str(spec), "--no-progress"])
    captured = capsys.readouterr()
    return code, captured.err + captured.out


@pytest.mark.parametrize(("fault", "error", "words"), CASES, ids=[c[0] for c in CASES])
def test_fault_gives_its_exit_code_and_one_line(tmp_path, capsys, fault, error, words):
    with FaultyEndpoint(fault) as server:
        code, output = _pull(tmp_path, server.url, capsys)
    assert code == error.exit_code
    lines = [line for line in output.splitlines() if line.strip()]
    assert len(lines) == 1, output
    assert words in lines[0]
    assert server.url in lines[0]  # names the endpoint
    assert "Traceback" not in output
    assert not (tmp_path / "snapshot").exists()  # nothing half-written


def test_server_errors_are_retried_then_reported(tmp_path, capsys):
    with FaultyEndpoint("503") as server:
        code, output = _pull(tmp_path, server.url, capsys)
    assert code == SourceServerError.exit_code == 6
    # the first failing unit is tried ``attempts`` times (two units may run at once); the
    # units after it are not sent at all
    assert FAST_RETRIES["attempts"] <= server.selects <= 2 * FAST_RETRIES["attempts"]
    assert f"after {FAST_RETRIES['attempts']} tries" in output


def test_authentication_is_not_retried(tmp_path, capsys):
    with FaultyEndpoint("401") as server:
        code, _ = _pull(tmp_path, server.url, capsys)
    assert code == AuthenticationError.exit_code == 4
    assert server.selects <= 2  # once per unit running at that moment, no retry


def test_connection_refused_is_source_unavailable(tmp_path, capsys):
    from servers._base import free_port

    url = f"http://127.0.0.1:{free_port()}/query"
    code, output = _pull(tmp_path, url, capsys)
    assert code == SourceUnavailableError.exit_code == 3, output
    assert "cannot connect to the endpoint" in output and url in output


def test_distinct_exit_codes():
    codes = {e.exit_code for _, e, _ in CASES} | {SourceUnavailableError.exit_code}
    assert codes == {3, 4, 5, 6, 7}
