"""rdf-store with its store on disk: byte-identical to rdf-file, reused between runs.

The on-disk mode reads the wanted quads by index scans, in blocks, and answers units with
DuckDB as rdf-file does; it is forced here with ``source.store_folder`` or by lowering
``DISK_FROM``.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from rdfsource_helpers import pull_snapshot, table_hashes
from test_differential import CONFIGS, random_dump
from test_differential import _spec as differential_spec

from graphmill.connectors.rdf import _disk_store, _facts, embedded
from graphmill.errors import InputError, SpecError
from graphmill.spec import spec_from_dict


def _spec(root: Path, kind: str, out: str, store: str | None = None, **rdf):
    """The differential test's spec (every RDF feature), with ``store_folder`` if given."""
    spec = differential_spec(root, kind, out, **rdf)
    if store is None:
        return spec
    raw = dict(spec.raw)
    raw["source"] = {**raw["source"], "store_folder": store}
    return spec_from_dict(raw, base_dir=root)


@pytest.mark.parametrize("config", CONFIGS)
def test_disk_store_matches_rdf_file_byte_for_byte(tmp_path, monkeypatch, config):
    (tmp_path / "dump.nq").write_text(random_dump(5), encoding="utf-8")
    monkeypatch.setattr(_facts, "BATCH_ROWS", 4)  # subjects split across DuckDB batches
    monkeypatch.setattr(_disk_store, "CHUNK_QUADS", 5)  # scans read in many blocks
    file_snap = pull_snapshot(_spec(tmp_path, "rdf-file", "file", **config))
    disk_snap = pull_snapshot(_spec(tmp_path, "rdf-store", "disk", "store", **config))
    monkeypatch.setattr(embedded, "DISK_FROM", 0)  # a temporary store beside the output
    temp_snap = pull_snapshot(_spec(tmp_path, "rdf-store", "temp", **config), page_rows=5)
    assert table_hashes(disk_snap) == table_hashes(file_snap) == table_hashes(temp_snap)
    for vt in ("A", "B", "C"):
        assert disk_snap.value_kinds("vertices", vt) == file_snap.value_kinds("vertices", vt)
    assert disk_snap.document["warnings"] == file_snap.document["warnings"]
    assert not list((tmp_path / "temp").glob(".graphmill-*"))  # scratch removed


def test_store_folder_is_reused_while_the_inputs_stay(tmp_path):
    (tmp_path / "dump.nq").write_text(random_dump(6), encoding="utf-8")
    first = table_hashes(pull_snapshot(_spec(tmp_path, "rdf-store", "one", "store")))
    marker = tmp_path / "store" / "graphmill-store.json"
    assert json.loads(marker.read_text())["state"] == "loaded"
    loaded_at = marker.stat().st_mtime_ns
    second = table_hashes(pull_snapshot(_spec(tmp_path, "rdf-store", "two", "store")))
    assert second == first and marker.stat().st_mtime_ns == loaded_at  # not loaded again
    (tmp_path / "dump.nq").write_text(random_dump(7), encoding="utf-8")
    third = table_hashes(pull_snapshot(_spec(tmp_path, "rdf-store", "three", "store")))
    reference = table_hashes(pull_snapshot(_spec(tmp_path, "rdf-file", "file")))
    assert third == reference != first


def test_a_half_loaded_store_is_loaded_again(tmp_path):
    (tmp_path / "dump.nq").write_text(random_dump(6), encoding="utf-8")
    pull_snapshot(_spec(tmp_path, "rdf-store", "one", "store"))
    marker = tmp_path / "store" / "graphmill-store.json"
    marker.write_text(json.dumps({**json.loads(marker.read_text()), "state": "loading"}))
    again = table_hashes(pull_snapshot(_spec(tmp_path, "rdf-store", "two", "store")))
    assert again == table_hashes(pull_snapshot(_spec(tmp_path, "rdf-file", "file")))
    assert json.loads(marker.read_text())["state"] == "loaded"


def test_a_folder_of_other_files_is_refused_and_kept(tmp_path):
    (tmp_path / "dump.nq").write_text(random_dump(6), encoding="utf-8")
    (tmp_path / "mine").mkdir()
    (tmp_path / "mine" / "notes.txt").write_text("keep me")
    with pytest.raises(SpecError) as caught:
        pull_snapshot(_spec(tmp_path, "rdf-store", "out", "mine"))
    assert caught.value.key_path == "source.store_folder"
    assert (tmp_path / "mine" / "notes.txt").read_text() == "keep me"


def test_rdf_file_refuses_a_store_folder(tmp_path):
    (tmp_path / "dump.nq").write_text(random_dump(6), encoding="utf-8")
    with pytest.raises(SpecError):
        _spec(tmp_path, "rdf-file", "out", "store")


def test_reject_on_disk_fails_as_in_memory(tmp_path, monkeypatch):
    monkeypatch.setattr(_disk_store, "CHUNK_QUADS", 5)
    (tmp_path / "dump.nq").write_text(random_dump(4), encoding="utf-8")
    messages = []
    for store in (None, "store"):
        with pytest.raises(InputError) as caught:
            pull_snapshot(_spec(tmp_path, "rdf-store", "out", store, several_types="reject"))
        messages.append(caught.value.one_line())
    assert messages[0] == messages[1]
    shutil.rmtree(tmp_path / "store")
