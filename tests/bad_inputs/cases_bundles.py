"""Damaged bundles, each run through ``graphmill inspect``: exit 8, one line naming the file.

A good small bundle (features, labels, codes, parts) is built once per test session with
the Python API and copied into each case's folder by its ``setup``, which then damages one
thing. Damage that a resealed manifest could hide (counts that contradict tensor shapes, a
tensor file rewritten with its new hash recorded) is resealed on purpose: the structural
checks must catch what the hashes cannot. ``tests/test_bundle.py`` runs the same damage
through ``load_bundle``.
"""

from __future__ import annotations

import atexit
import functools
import hashlib
import json
import shutil
import struct
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import Any

from tests.bad_inputs._corpus import Case, table_project, table_spec

MANIFEST = "bundle/manifest.json"
TENSORS = "bundle/tensors.safetensors"

Damage = Callable[[Path], None]


@functools.cache
def good_bundle() -> Path:
    """A good bundle built once (in a folder that lives as long as the test session)."""
    import graphmill

    root = Path(tempfile.mkdtemp(prefix="graphmill-good-bundle-"))
    atexit.register(shutil.rmtree, root, True)
    rows = "".join(f"p{i},{20 + i},{'red' if i % 2 else 'blue'},c{i % 3}\n" for i in range(12))
    spec = table_spec(
        properties="{age: {kind: integer}, team: {kind: string}, city: {kind: string}}",
        extra=(
            "features: {person: [{property: age, encoding: standardize},"
            " {property: city, encoding: categories}]}\n"
            "label: {vertex_type: person, property: team}\n"
            "split: {fractions: {train: 0.5, validation: 0.25, test: 0.25}, seed: 1}\n"
        ),
    )
    files = table_project(spec, {"people.csv": "ref,age,team,city\n" + rows})
    for rel, text in files.items():
        (root / rel).write_text(str(text), encoding="utf-8")
    graphmill.run(root / "spec.yaml")
    return root / "out" / "bundle"


# --- helpers that damage a copy -----------------------------------------------------------


def _manifest(root: Path) -> dict[str, Any]:
    return json.loads((root / MANIFEST).read_text(encoding="utf-8"))


def _seal(root: Path, document: dict[str, Any]) -> None:
    from graphmill.bundle import seal_manifest

    (root / MANIFEST).write_bytes(seal_manifest(document))


def _edit_manifest(edit: Callable[[dict[str, Any]], None]) -> Damage:
    """Change the parsed manifest and reseal it (right self-hash, wrong content)."""

    def damage(root: Path) -> None:
        document = _manifest(root)
        edit(document)
        _seal(root, document)

    return damage


def _manifest_text(text: str | bytes) -> Damage:
    def damage(root: Path) -> None:
        data = text.encode() if isinstance(text, str) else text
        (root / MANIFEST).write_bytes(data)

    return damage


def _manifest_replace(old: str, new: str) -> Damage:
    def damage(root: Path) -> None:
        path = root / MANIFEST
        text = path.read_text(encoding="utf-8")
        assert old in text, old
        path.write_text(text.replace(old, new, 1), encoding="utf-8")

    return damage


def _split_tensors(data: bytes) -> tuple[dict[str, Any], bytes]:
    (length,) = struct.unpack("<Q", data[:8])
    return json.loads(data[8 : 8 + length]), data[8 + length :]


def _record_tensor_file(root: Path) -> None:
    """Record the tensor file's new size and hash in the manifest, and reseal it."""
    document = _manifest(root)
    data = (root / TENSORS).read_bytes()
    for entry in document["files"]:
        if entry["path"] == "tensors.safetensors":
            entry["bytes"] = len(data)
            entry["sha256"] = hashlib.sha256(data).hexdigest()
    _seal(root, document)


def _tensor_bytes(make: Callable[[bytes], bytes]) -> Damage:
    """Rewrite the tensor file's bytes (given the good ones) and record its new hash."""

    def damage(root: Path) -> None:
        path = root / TENSORS
        path.write_bytes(make(path.read_bytes()))
        _record_tensor_file(root)

    return damage


def _tensor_header(edit: Callable[[dict[str, Any]], Any], *, raw: bool = False) -> Damage:
    """Rewrite the tensor file's JSON header (the data unchanged) and record its new hash."""

    def make(data: bytes) -> bytes:
        header, body = _split_tensors(data)
        changed = edit(header)
        text = changed if raw else json.dumps(header).encode()
        return struct.pack("<Q", len(text)) + text + body

    return _tensor_bytes(make)


def _length_prefix(length: int) -> Damage:
    return _tensor_bytes(lambda data: struct.pack("<Q", length) + data[8:])


def _first_key(header: dict[str, Any], prefix: str) -> str:
    return next(k for k in sorted(header) if k.startswith(prefix))


def _set_entry(prefix: str, field: str, value: Any) -> Callable[[dict[str, Any]], None]:
    def edit(header: dict[str, Any]) -> None:
        header[_first_key(header, prefix)][field] = value

    return edit


def _drop_tensor(header: dict[str, Any]) -> None:
    del header[_first_key(header, "vertex.person.labels")]


def _deep(depth: int) -> str:
    return "[" * depth + "]" * depth


def _person(document: dict[str, Any]) -> dict[str, Any]:
    return document["vertex_types"]["person"]


def _relation(document: dict[str, Any]) -> dict[str, Any]:
    return document["relations"]["person.knows.person"]


def _set_both_counts(document: dict[str, Any]) -> None:
    _person(document)["count"] = 13
    document["counts"]["vertices"]["person"] = 13


def _set_both_edge_counts(document: dict[str, Any]) -> None:
    _relation(document)["count"] = 5
    document["counts"]["edges"]["person.knows.person"] = 5


def _widen_features(document: dict[str, Any]) -> None:
    _person(document)["features"]["width"] += 1


def _resize_part(document: dict[str, Any]) -> None:
    _person(document)["parts"]["sizes"]["train"] += 1


def _index_and_shape(document: dict[str, Any]) -> None:
    key = "relation.person.knows.person.endpoints"
    document["tensors"][key]["shape"] = [2, 5]


def _remove_directory_tensor(root: Path) -> None:
    (root / TENSORS).unlink()
    (root / TENSORS).mkdir()


def _set(path: tuple[str, ...], value: Any) -> Callable[[dict[str, Any]], None]:
    def edit(document: dict[str, Any]) -> None:
        target = document
        for key in path[:-1]:
            target = target[key]
        target[path[-1]] = value

    return edit


def _delete(key: str) -> Callable[[dict[str, Any]], None]:
    return lambda document: document.pop(key)


DAMAGE: dict[str, tuple[str, Damage]] = {
    # the manifest as a document
    "manifest-empty": (MANIFEST, _manifest_text(b"")),
    "manifest-garbage": (MANIFEST, _manifest_text(b"\x00\x01garbage{")),
    "manifest-not-utf8": (MANIFEST, _manifest_text(b'{"bundle_format": "\xff"}')),
    "manifest-truncated": (MANIFEST, lambda r: _truncate(r / MANIFEST)),
    "manifest-array": (MANIFEST, _manifest_text("[1, 2]")),
    "manifest-nested-100k": (MANIFEST, _manifest_text('{"validation": ' + _deep(100_000) + "}")),
    "manifest-nested-in-validation": (
        MANIFEST,
        _manifest_replace(
            '"validation": ', '"validation": ' + '{"a": ' * 50_000 + "1" + "}" * 50_000 + ', "x": '
        ),
    ),
    "manifest-huge-integer": (MANIFEST, _manifest_replace('"count": 12', '"count": ' + "9" * 5000)),
    "manifest-big-integer": (MANIFEST, _manifest_replace('"count": 12', '"count": ' + "9" * 100)),
    "manifest-nan": (MANIFEST, _manifest_replace('"seed": 1', '"seed": NaN')),
    "manifest-infinity": (MANIFEST, _manifest_replace('"seed": 1', '"seed": -Infinity')),
    "manifest-format-2": (MANIFEST, _manifest_replace('"bundle_format": 1', '"bundle_format": 2')),
    "manifest-format-string": (
        MANIFEST,
        _manifest_replace('"bundle_format": 1', '"bundle_format": "1"'),
    ),
    "manifest-missing": (MANIFEST, lambda r: (r / MANIFEST).unlink()),
    "manifest-is-directory": (
        MANIFEST,
        lambda r: ((r / MANIFEST).unlink(), (r / MANIFEST).mkdir()),
    ),
    "manifest-without-tensors": (MANIFEST, _edit_manifest(_delete("tensors"))),
    "manifest-without-files": (MANIFEST, _edit_manifest(_delete("files"))),
    "manifest-without-counts": (MANIFEST, _edit_manifest(_delete("counts"))),
    "manifest-types-as-list": (MANIFEST, _edit_manifest(_set(("vertex_types",), []))),
    "manifest-negative-count": (MANIFEST, _edit_manifest(lambda d: _person(d).update(count=-1))),
    "manifest-count-as-text": (MANIFEST, _edit_manifest(lambda d: _person(d).update(count="12"))),
    "manifest-count-as-float": (MANIFEST, _edit_manifest(lambda d: _person(d).update(count=12.5))),
    "manifest-dtype-float16": (
        MANIFEST,
        _edit_manifest(lambda d: d["tensors"]["vertex.person.features"].update(dtype="float16")),
    ),
    "manifest-shape-as-text": (
        MANIFEST,
        _edit_manifest(lambda d: d["tensors"]["vertex.person.features"].update(shape="12x3")),
    ),
    "manifest-path-escapes": (
        MANIFEST,
        _edit_manifest(lambda d: d["files"][0].update(path="../../outside.parquet")),
    ),
    "manifest-relation-to-unknown-type": (
        MANIFEST,
        _edit_manifest(lambda d: _relation(d).update(target_type="ghost")),
    ),
    "manifest-table-outside": (
        MANIFEST,
        _edit_manifest(lambda d: _person(d).update(table="/etc/hostname")),
    ),
    "manifest-counts-disagree": (
        MANIFEST,
        _edit_manifest(_set(("counts", "vertices", "person"), 99)),
    ),
    # resealed manifests whose counts contradict the tensors (the hashes are all right)
    "resealed-vertex-count": (TENSORS, _edit_manifest(_set_both_counts)),
    "resealed-edge-count": (TENSORS, _edit_manifest(_set_both_edge_counts)),
    "resealed-feature-width": (TENSORS, _edit_manifest(_widen_features)),
    "resealed-part-size": (TENSORS, _edit_manifest(_resize_part)),
    "resealed-tensor-index-shape": (TENSORS, _edit_manifest(_index_and_shape)),
    "resealed-tensor-index-dtype": (
        TENSORS,
        _edit_manifest(lambda d: d["tensors"]["vertex.person.features"].update(dtype="int64")),
    ),
    "resealed-extra-index-entry": (
        TENSORS,
        _edit_manifest(
            lambda d: d["tensors"].update(
                {"vertex.person.extra": {"dtype": "int64", "shape": [12], "meaning": "x"}}
            )
        ),
    ),
    # the tensor file
    "tensors-missing": (TENSORS, lambda r: (r / TENSORS).unlink()),
    "tensors-is-directory": (TENSORS, _remove_directory_tensor),
    "tensors-empty": (TENSORS, _tensor_bytes(lambda data: b"")),
    "tensors-five-bytes": (TENSORS, _tensor_bytes(lambda data: data[:5])),
    "tensors-garbage": (TENSORS, _tensor_bytes(lambda data: bytes(range(256)) * 8)),
    "tensors-header-length-huge": (TENSORS, _length_prefix(2**63 + 5)),
    "tensors-header-length-200mb": (TENSORS, _length_prefix(200_000_000)),
    "tensors-header-length-past-end": (
        TENSORS,
        _tensor_bytes(lambda d: struct.pack("<Q", len(d)) + d[8:]),
    ),
    "tensors-header-length-short": (
        TENSORS,
        _tensor_bytes(lambda d: struct.pack("<Q", 10) + d[8:]),
    ),
    "tensors-truncated-data": (TENSORS, _tensor_bytes(lambda data: data[:-7])),
    "tensors-trailing-bytes": (TENSORS, _tensor_bytes(lambda data: data + b"\x00" * 16)),
    "tensors-header-garbage": (TENSORS, _tensor_header(lambda h: b"{not json at all}", raw=True)),
    "tensors-header-array": (TENSORS, _tensor_header(lambda h: b"[1, 2, 3]", raw=True)),
    "tensors-header-not-utf8": (TENSORS, _tensor_header(lambda h: b'{"\xff": 1}', raw=True)),
    "tensors-header-nested": (TENSORS, _tensor_header(lambda h: _deep(50_000).encode(), raw=True)),
    "tensors-header-nan": (TENSORS, _tensor_header(lambda h: b'{"a": NaN}', raw=True)),
    "tensors-header-huge-offset": (
        TENSORS,
        _tensor_header(
            lambda h: json.dumps(h).replace("[0,", "[" + "9" * 5000 + ",").encode(), raw=True
        ),
    ),
    "tensors-dtype-f16": (
        TENSORS,
        _tensor_header(_set_entry("vertex.person.labels", "dtype", "F16")),
    ),
    "tensors-dtype-unknown": (
        TENSORS,
        _tensor_header(_set_entry("vertex.person.labels", "dtype", "Q9")),
    ),
    "tensors-shape-negative": (
        TENSORS,
        _tensor_header(_set_entry("vertex.person.labels", "shape", [-12])),
    ),
    "tensors-shape-swapped": (
        TENSORS,
        _tensor_header(_set_entry("relation.person.knows.person.endpoints", "shape", [4, 2])),
    ),
    "tensors-offsets-past-end": (
        TENSORS,
        _tensor_header(_set_entry("vertex.person.labels", "data_offsets", [0, 10**9])),
    ),
    "tensors-offsets-overlap": (
        TENSORS,
        _tensor_header(_set_entry("vertex.person.labels", "data_offsets", [0, 96])),
    ),
    "tensors-entry-not-object": (
        TENSORS,
        _tensor_header(lambda h: h.update({_first_key(h, "vertex.person.labels"): 7})),
    ),
    "tensors-missing-tensor": (TENSORS, _tensor_header(_drop_tensor)),
}


def _truncate(path: Path) -> None:
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])


def _setup(damage: Damage) -> Callable[[Path], None]:
    def setup(root: Path) -> None:
        shutil.copytree(good_bundle(), root / "bundle")
        damage(root)

    return setup


CASES = [
    Case(
        name=f"bundle-{name}",
        category="bundles",
        files={},
        argv=("inspect", "{dir}/bundle"),
        exit_code=8,
        where="{dir}/" + where,
        setup=_setup(damage),
    )
    for name, (where, damage) in DAMAGE.items()
]
