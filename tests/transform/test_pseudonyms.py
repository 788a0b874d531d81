"""Pseudonyms: RFC 4231 HMAC-SHA256 vectors, the stdlib hmac module, and the key's absence."""

from __future__ import annotations

import hmac
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from graphmill.bundle import load_bundle
from graphmill.errors import SpecError
from graphmill.transform import build_bundle
from graphmill.transform._pseudonyms import _keyed_states, pseudonym_key, pseudonyms

from ._snapshots import bundle_bytes, publish, spec_document

KEY = "k3y-for-tests-0123456789"

# RFC 4231, section 4.2 (test case 1) and 4.3 (test case 2), HMAC-SHA-256 (values from memory,
# cross-checked below against Python's hmac module).
RFC4231 = [
    (b"\x0b" * 20, b"Hi There", "b0344c61d8db38535ca8afceaf0bf12b881dc200c9833da726e9376c2e32cff7"),
    (
        b"Jefe",
        b"what do ya want for nothing?",
        "5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843",
    ),
]


@pytest.mark.parametrize(("key", "data", "mac"), RFC4231)
def test_keyed_states_compute_rfc4231_hmac_sha256(key: bytes, data: bytes, mac: str) -> None:
    inner, outer = _keyed_states(key)
    h = inner.copy()
    h.update(data)
    o = outer.copy()
    o.update(h.digest())
    assert o.hexdigest() == mac == hmac.new(key, data, "sha256").hexdigest()


@given(st.lists(st.text(max_size=8), max_size=20), st.binary(min_size=16, max_size=100))
@settings(max_examples=40, deadline=None)
def test_pseudonyms_equal_stdlib_hmac_over_type_nul_id(ids: list[str], key: bytes) -> None:
    out = pseudonyms("member", pa.array(ids, pa.string()), key).to_pylist()
    expected = [hmac.new(key, b"member\x00" + i.encode(), "sha256").hexdigest()[:32] for i in ids]
    assert out == expected


def test_the_vertex_type_is_part_of_the_message() -> None:
    key = b"0123456789abcdef"
    a = pseudonyms("member", pa.array(["x"]), key)
    b = pseudonyms("shop", pa.array(["x"]), key)
    assert a != b


def test_a_missing_key_names_the_variable(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("GM_TEST_KEY", raising=False)
    with pytest.raises(SpecError, match=r"GM_TEST_KEY is not set.*set GM_TEST_KEY"):
        pseudonym_key("GM_TEST_KEY")
    monkeypatch.setenv("GM_TEST_KEY", "short")
    with pytest.raises(SpecError, match="shorter than 16 bytes"):
        pseudonym_key("GM_TEST_KEY")


def _pseudonymized(tmp_path: Path):
    document = spec_document(
        tmp_path,
        {"person": {"properties": {"city": None}}},
        [{"from": "person", "name": "knows", "to": "person"}],
        ids={"pseudonymize": True, "key_env": "GM_TEST_KEY"},
    )
    people = pa.table({"vertex_id": ["alice", "bob", "carol"], "city": ["Oslo", "Lima", None]})
    knows = pa.table({"source_id": ["alice", "bob"], "target_id": ["bob", "carol"]})
    return publish(document, {"person": people, "person.knows.person": knows})


def test_a_pseudonymized_bundle_ships_no_original_id_and_no_key(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("GM_TEST_KEY", KEY)
    spec, snapshot = _pseudonymized(tmp_path)
    build_bundle(spec, snapshot)
    # Parquet pages are compressed, so search the decoded cells as well as the raw bytes.
    for rel, blob in bundle_bytes(spec.output.bundle).items():
        text = blob.decode("utf-8", "replace")
        if rel.endswith(".parquet"):
            text += repr(pq.read_table(spec.output.bundle / rel).to_pylist())
        for secret in ("alice", "bob", "carol", KEY):
            assert secret not in text, (secret, rel)
    bundle = load_bundle(spec.output.bundle)
    key = KEY.encode()
    names = {
        hmac.new(key, f"person\x00{n}".encode(), "sha256").hexdigest()[:32]: n
        for n in ("alice", "bob", "carol")
    }
    endpoints = bundle.relations[next(iter(bundle.relations))].endpoints
    decoded = list(
        zip(
            bundle.decode("person", endpoints[0]),
            bundle.decode("person", endpoints[1]),
            strict=True,
        )
    )
    assert sorted((names[s], names[t]) for s, t in decoded) == [("alice", "bob"), ("bob", "carol")]
    assert bundle.decode("person", [0, 1, 2]) == sorted(names)  # indices in pseudonym order
    ids = bundle.manifest["ids"]
    assert ids == {
        "pseudonymized": True,
        "scheme": "hmac-sha256-128",
        "key_env": "GM_TEST_KEY",
        "index_order": "pseudonym",
        # equal keys, equal fingerprints: lets two bundles' pseudonyms be matched
        "key_fingerprint": hmac.new(key, b"graphmill key fingerprint", "sha256").hexdigest()[:16],
    }


def test_a_pseudonymized_build_without_the_key_writes_nothing(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.delenv("GM_TEST_KEY", raising=False)
    spec, snapshot = _pseudonymized(tmp_path)
    with pytest.raises(SpecError, match="GM_TEST_KEY"):
        build_bundle(spec, snapshot)
    assert not spec.output.bundle.exists()
    assert [p.name for p in spec.output.bundle.parent.iterdir()] == ["snapshot"]
