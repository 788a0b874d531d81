"""A Gremlin Server with SASL authentication and TLS (self-signed certificate): credentials
from environment variables only, certificate trust, and no secret in any output."""

from __future__ import annotations

import base64
import logging

import pytest
import yaml
from gremlin_helpers import MODERN_RELATIONS, MODERN_TYPES, gremlin_spec

from graphmill.cli import main
from graphmill.connectors import open_source
from graphmill.errors import AuthenticationError, SourceUnavailableError
from graphmill.pipeline import Pipeline

pytestmark = pytest.mark.servers
USER_ENV, PASSWORD_ENV = "GRAPHMILL_TEST_GREMLIN_USER", "GRAPHMILL_TEST_GREMLIN_PASSWORD"


@pytest.fixture
def secure(gremlin_secure_server, monkeypatch):
    monkeypatch.setenv(USER_ENV, gremlin_secure_server.username)
    monkeypatch.setenv(PASSWORD_ENV, gremlin_secure_server.password)
    return gremlin_secure_server


def _source(server, **tls):
    return {
        "traversal_source": "g_modern",
        "username_env": USER_ENV,
        "password_env": PASSWORD_ENV,
        "retries": {"attempts": 2, "initial_wait_s": 0},
        **({"tls": tls} if tls else {}),
    }


def _spec(folder, server, **tls):
    return gremlin_spec(
        folder, server.url, MODERN_TYPES, MODERN_RELATIONS, **_source(server, **tls)
    )


def test_right_credentials_and_trusted_ca_pull_check_and_build(secure, tmp_path, caplog, capfd):
    caplog.set_level(logging.DEBUG)
    spec = _spec(tmp_path, secure, ca_file=str(secure.cert_path))
    result = Pipeline(spec).run()
    # TinkerPop reference documentation, toy graphs, "Modern": 4 person, 2 software
    assert result.pull.vertex_counts == {"person": 4, "software": 2}
    assert result.build is not None
    assert secure.url.startswith("wss://")
    secrets = [secure.password.encode()]
    sasl = b"\0" + secure.username.encode() + b"\0" + secure.password.encode()
    secrets.append(base64.b64encode(sasl))
    written = [
        p for folder in (spec.output.snapshot, spec.output.bundle) for p in folder.rglob("*")
    ]
    written.append(spec.output.report)
    for path in written:
        if path.is_file():
            data = path.read_bytes()
            assert not any(s in data for s in secrets), path
    captured = capfd.readouterr()
    text = (caplog.text + captured.out + captured.err).encode()
    assert not any(s in text for s in secrets)
    source = result.build.to_dict() if hasattr(result.build, "to_dict") else {}
    assert secure.password not in str(source)


def test_wrong_password_is_exit_code_4(secure, tmp_path, monkeypatch, capsys):
    monkeypatch.setenv(PASSWORD_ENV, "not-the-password")
    spec = _spec(tmp_path, secure, ca_file=str(secure.cert_path))
    with pytest.raises(AuthenticationError) as caught:
        Pipeline(spec).pull()
    assert "refused the credentials" in str(caught.value)
    document = {
        "spec_version": 1,
        "source": {
            "kind": "gremlin",
            "url": secure.url,
            **_source(secure, ca_file=str(secure.cert_path)),
        },
        "vertex_types": MODERN_TYPES,
        "output": {"bundle": str(tmp_path / "cli" / "bundle")},
    }
    path = tmp_path / "spec.yaml"
    path.write_text(yaml.safe_dump(document))
    assert main(["pull", str(path), "--no-progress"]) == 4
    message = capsys.readouterr().err
    assert "not-the-password" not in message and message.strip().count("\n") == 0


def test_missing_credential_variable_is_an_authentication_error(secure, tmp_path, monkeypatch):
    monkeypatch.delenv(PASSWORD_ENV)
    spec = _spec(tmp_path, secure, ca_file=str(secure.cert_path))
    with pytest.raises(AuthenticationError, match=PASSWORD_ENV):
        Pipeline(spec).pull()


def test_untrusted_certificate_is_refused_with_advice(secure, tmp_path):
    spec = _spec(tmp_path, secure)  # verify is on by default; the cert is self-signed
    with pytest.raises(SourceUnavailableError) as caught:
        Pipeline(spec).pull()
    assert caught.value.exit_code == 3
    assert "certificate is not trusted" in str(caught.value)
    assert "tls.ca_file" in str(caught.value)


def test_verification_off_only_when_the_spec_says_so(secure, tmp_path):
    spec = _spec(tmp_path, secure, verify=False)
    info = Pipeline(spec).pull()
    assert info.edge_counts == {"person.knows.person": 2, "person.created.software": 4}


def test_plain_client_is_refused_by_the_tls_port(secure, tmp_path):
    plain = secure.url.replace("wss://", "ws://")
    spec = gremlin_spec(
        tmp_path, plain, MODERN_TYPES, [], traversal_source="g_modern", retries={"attempts": 1}
    )
    with pytest.raises(SourceUnavailableError), open_source(spec) as source:
        list(source.read(source.plan()[0]))
