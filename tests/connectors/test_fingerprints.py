"""Input fingerprints: files by size, modification time and sha256; what counts as a change."""

from __future__ import annotations

import hashlib
import os

from graphmill.connectors._fingerprints import FileFingerprints, changes, key_digest, publishable


def test_file_fingerprint_matches_hashlib(tmp_path):
    path = tmp_path / "a.csv"
    path.write_bytes(b"id\n1\n")
    found = FileFingerprints().of_files([(path, "a.csv")])
    # the reference: hashlib over the same bytes
    assert found["files"][0]["sha256"] == hashlib.sha256(b"id\n1\n").hexdigest()
    assert found["files"][0]["size"] == 5
    assert found["files"][0]["mtime_ns"] == path.stat().st_mtime_ns


def test_touch_is_not_a_change_but_new_content_is(tmp_path):
    path = tmp_path / "a.csv"
    path.write_bytes(b"id\n1\n")
    before = FileFingerprints().of_files([(path, "a.csv")])
    stat = path.stat()
    os.utime(path, ns=(stat.st_atime_ns, stat.st_mtime_ns + 10**9))
    touched = FileFingerprints().of_files([(path, "a.csv")])
    assert touched != before and changes(before, touched) == []
    path.write_bytes(b"id\n2\n")
    assert changes(before, FileFingerprints().of_files([(path, "a.csv")])) == [
        "file a.csv changed (same size, different sha256)"
    ]


def test_files_added_or_dropped_are_named():
    one = {"files": [{"path": "a", "size": 1, "mtime_ns": 0, "sha256": "x"}]}
    two = {"files": [*one["files"], {"path": "b", "size": 1, "mtime_ns": 0, "sha256": "y"}]}
    assert changes(one, two) == ["file b added"]
    assert changes(two, one) == ["file b no longer read"]


def test_server_fingerprints_say_what_changed_without_keys():
    old = {"count": 3, "first": key_digest("v1"), "last": key_digest("v3")}
    new = {"count": 3, "first": key_digest("v1"), "last": key_digest("v4")}
    assert changes(old, new) == ["last changed"]
    assert "v4" not in str(new)


def test_unknown_fingerprints_change_nothing():
    assert changes(None, {"count": 1}) == [] and changes({"count": 1}, None) == []


def test_publishable_drops_modification_times():
    found = {"files": [{"path": "a", "size": 1, "mtime_ns": 5, "sha256": "x"}]}
    assert publishable(found) == {"files": [{"path": "a", "size": 1, "sha256": "x"}]}
    assert publishable({"count": 2}) == {"count": 2}
