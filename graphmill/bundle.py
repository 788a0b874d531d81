"""Graph bundles: the layout, a hash-checked loader into torch tensors, and a summary.

A bundle is a folder, written in one piece by :func:`graphmill.transform.build_bundle`::

    <bundle>/
      manifest.json                  what is here: counts, encoders, classes, parts, policies,
                                     the tensor index and the sha256 of every other file
      tensors.safetensors            every tensor, keyed
                                       vertex.<type>.features                float32 [N, F]
                                       vertex.<type>.labels                  int64 [N], -1 unlabeled
                                       vertex.<type>.targets                 float32 [N], NaN none
                                       vertex.<type>.codes.<property>        int64 [N] (categories)
                                       vertex.<type>.part.<part>.positions   int64 [n], sorted
                                       vertex.<type>.part.<part>.flags       bool [N]
                                       relation.<src>.<rel>.<dst>.endpoints  int64 [2, E]
                                       relation.<src>.<rel>.<dst>.multiplicity  float32 [E]
                                       relation.<src>.<rel>.<dst>.targets   [E] (edge tasks)
                                       relation.<src>.<rel>.<dst>.part.<part>.positions  int64
                                       relation.<src>.<rel>.<dst>.negatives.<part>  int64 [2, n]
      tables/vertices/<type>.parquet   index, vertex_id (or pseudonym), declared properties
      tables/edges/<src>.<rel>.<dst>.parquet  source_index, target_index, [multiplicity], properties
      tables/features/<type>.parquet   index, encoded columns, <property>__code columns
      tables/parts/<type>.parquet      index, part ("train" | "validation" | "test")
      tables/edge_parts/<src>.<rel>.<dst>.parquet  edge (position), part (edge tasks)

A bundle with more than ``output.shard_edges`` edges in all (default
:data:`graphmill._shards.SHARD_EDGES`) is sharded: no ``tensors.safetensors``, but the same
keys under ``tensors/``: ``vertex.<type>.safetensors``, ``relation.<key>.safetensors`` (the
relation's tensors not aligned with its edges) and ``relation.<key>.<k>.safetensors`` (the
endpoints and multiplicity of the ``k``-th range of ``shard_edges`` edges). The manifest then
has ``tensor_layout`` and each tensor's ``pieces`` (``file``, ``start``, ``stop`` along
``axis``); every shard is listed in ``files`` with its sha256.

``<part>`` is ``train``, ``validation`` or ``test``. Row 0 of ``endpoints`` holds source
indices, row 1 target indices, sorted by (source, target). The manifest is canonical JSON
(sorted keys, two-space indent) carrying ``manifest_sha256``, the sha256 of its own canonical
form without that key, so that a change to any byte of any file is detected. Two builds of the
same input are byte-identical: no timestamps, no machine paths beyond the source location.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from graphmill._atomic import sha256_file
from graphmill._bundle_checks import (
    MAX_MANIFEST_BYTES,
    capped,
    check_manifest_counts,
    check_tensor_values,
    parse_json,
    read_bounded,
    short_value,
)
from graphmill._bundle_tensors import TENSOR_FILE, check_tensor_files, read_tensors
from graphmill._output_kinds import read_stale_note
from graphmill._shards import SHARD_FOLDER, owner
from graphmill.errors import BundleIntegrityError, InputError, require
from graphmill.spec import RelationKey

BUNDLE_FORMAT = 1
MANIFEST_FILE = "manifest.json"
SELF_HASH_KEY = "manifest_sha256"
PARTS = ("train", "validation", "test")
EDGE_ROLES = ("message", "supervision")  # disjoint subsets of a links task's train edges


def vertex_key(vertex_type: str, what: str) -> str:
    return f"vertex.{vertex_type}.{what}"


def relation_key(relation: RelationKey, what: str) -> str:
    return f"relation.{relation.dotted}.{what}"


def table_path(kind: str, name: str) -> str:
    """``tables/<kind>/<name>.parquet``; kind is vertices, edges, features or parts."""
    return f"tables/{kind}/{name}.parquet"


def canonical_json(document: dict[str, Any]) -> bytes:
    return (
        json.dumps(document, indent=2, sort_keys=True, ensure_ascii=False, allow_nan=False) + "\n"
    ).encode("utf-8")


def seal_manifest(document: dict[str, Any]) -> bytes:
    """The manifest file's bytes: ``document`` plus its own hash, canonical JSON."""
    body = {k: v for k, v in document.items() if k != SELF_HASH_KEY}
    digest = hashlib.sha256(canonical_json(body)).hexdigest()
    return canonical_json({**body, SELF_HASH_KEY: digest})


def read_manifest(root: Path, *, verify: bool = True) -> dict[str, Any]:
    """Parse, check against the schema and (with ``verify``) check the self-hash; every
    defect is a :class:`BundleIntegrityError` naming the file."""
    path = root / MANIFEST_FILE
    if not path.is_file():
        raise BundleIntegrityError(
            "no manifest.json here: not a graphmill bundle", file=str(path), hint="build it again"
        )
    raw = read_bounded(path, MAX_MANIFEST_BYTES, "manifest.json")
    document = parse_json(raw, path, "the manifest")
    if not isinstance(document, dict):
        raise BundleIntegrityError(
            f"the manifest is a JSON {type(document).__name__}, not an object",
            file=str(path),
            hint="build the bundle again",
        )
    found = document.get("bundle_format")
    if type(found) is not int or found != BUNDLE_FORMAT:
        raise BundleIntegrityError(
            f"bundle format {short_value(found)} is not {BUNDLE_FORMAT}",
            file=str(path),
            hint="use the graphmill version that wrote it, or build it again",
        )
    try:
        sealed = verify and raw == seal_manifest(document)
    except (RecursionError, ValueError, TypeError):
        sealed = False
    if verify and not sealed:
        raise BundleIntegrityError(
            "manifest.json differs from what was written (its self-hash does not match)",
            file=str(path),
            hint="the bundle was altered or damaged; build it again",
        )
    from graphmill._schemas import schema_validator

    try:
        error = next(iter(schema_validator("manifest").iter_errors(document)), None)
    except RecursionError:
        raise BundleIntegrityError(
            "manifest is nested too deeply to check", file=str(path), hint="build it again"
        ) from None
    if error is not None:
        where = ".".join(str(p) for p in error.absolute_path) or "(top level)"
        raise BundleIntegrityError(
            f"manifest does not match the bundle schema: {capped(error.message)}",
            file=str(path),
            key_path=capped(where),
        )
    check_manifest_counts(document, path)
    return document


def verify_files(root: Path, manifest: dict[str, Any]) -> None:
    """Raise :class:`BundleIntegrityError` naming the first file missing or altered."""
    for entry in manifest["files"]:
        if not _file_ok(root, entry):
            path = root / entry["path"]
            raise BundleIntegrityError(
                "a file the manifest lists is missing"
                if not path.is_file()
                else "file's size or sha256 differs from the manifest",
                file=str(path),
                hint="the bundle was altered, damaged or copied in part; build it again",
            )


def _file_ok(root: Path, entry: dict[str, Any]) -> bool:
    path = root / entry["path"]
    return (
        path.is_file()
        and path.stat().st_size == entry["bytes"]
        and sha256_file(path) == entry["sha256"]
    )


@dataclass(frozen=True)
class VertexTypeTensors:
    """The tensors of one vertex type (``None`` or empty where the spec asked for nothing)."""

    name: str
    count: int
    features: Any = None  # torch.float32 [N, F]
    feature_names: tuple[str, ...] = ()
    labels: Any = None  # torch.int64 [N], -1 unlabeled
    class_names: tuple[str, ...] = ()
    codes: dict[str, Any] = field(default_factory=dict)  # property -> torch.int64 [N]
    vocabularies: dict[str, tuple[str, ...]] = field(default_factory=dict)
    parts: dict[str, Any] = field(default_factory=dict)  # part -> torch.int64 positions
    part_flags: dict[str, Any] = field(default_factory=dict)  # part -> torch.bool [N]
    targets: Any = None  # torch.float32 [N], standardized, NaN without (vertex-values task)
    # The manifest's encoder entries in feature order: property, encoding, columns, statistics.
    encoders: tuple[dict[str, Any], ...] = ()


@dataclass(frozen=True)
class RelationTensors:
    key: RelationKey
    endpoints: Any  # torch.int64 [2, E]: row 0 source index, row 1 target index
    multiplicity: Any = None  # torch.float32 [E] when repeated edges were merged
    targets: Any = None  # edge tasks: int64 class codes (-1 missing) or float32 standardized
    parts: dict[str, Any] = field(default_factory=dict)  # part or role -> int64 edge positions
    negatives: dict[str, Any] = field(default_factory=dict)  # part -> int64 [2, n]: non-edges
    features: Any = None  # torch.float32 [E, F], row i for edge i (spec edge_features)
    feature_names: tuple[str, ...] = ()
    encoders: tuple[dict[str, Any], ...] = ()  # the manifest's encoder entries, in order

    @property
    def count(self) -> int:
        return int(self.endpoints.shape[1])


@dataclass(frozen=True)
class GraphBundle:
    root: Path
    manifest: dict[str, Any]
    vertex_types: dict[str, VertexTypeTensors]
    relations: dict[RelationKey, RelationTensors]
    _id_cache: dict[str, pa.Array] = field(default_factory=dict, repr=False, compare=False)

    def vertex_table(self, vertex_type: str) -> pa.Table:
        """The shipped vertex rows (index, ID or pseudonym, declared properties)."""
        return pq.read_table(self.root / self._vertex_entry(vertex_type)["table"])

    def edge_table(self, relation: RelationKey) -> pa.Table:
        return pq.read_table(self.root / self.manifest["relations"][relation.dotted]["table"])

    def decode(self, vertex_type: str, indices: Any) -> list[str]:
        """Original IDs (or pseudonyms, when pseudonymized) of the vertices at ``indices``."""
        ids = self._ids(vertex_type)
        positions = np.asarray(
            indices.detach().cpu().numpy() if hasattr(indices, "detach") else indices,
            dtype=np.int64,
        ).reshape(-1)
        bad = positions[(positions < 0) | (positions >= len(ids))]
        if len(bad):
            raise InputError(
                f"index {int(bad[0])} is outside 0..{len(ids) - 1} for {vertex_type!r}",
                hint="decode indices of this vertex type only",
            )
        return ids.take(pa.array(positions)).to_pylist()

    def _vertex_entry(self, vertex_type: str) -> dict[str, Any]:
        entry = self.manifest["vertex_types"].get(vertex_type)
        if entry is None:
            known = ", ".join(sorted(self.manifest["vertex_types"]))
            raise InputError(f"no vertex type {vertex_type!r} in this bundle (has: {known})")
        return entry

    def _ids(self, vertex_type: str) -> pa.Array:
        if vertex_type not in self._id_cache:
            entry = self._vertex_entry(vertex_type)
            table = pq.read_table(self.root / entry["table"], columns=[entry["id_column"]])
            self._id_cache[vertex_type] = table.column(0).combine_chunks()
        return self._id_cache[vertex_type]


def load_bundle(
    path: str | Path,
    *,
    verify: bool = True,
    vertex_types: Iterable[str] | None = None,
    relations: Iterable[str | RelationKey] | None = None,
) -> GraphBundle:
    """Open a bundle; with ``verify`` every file's sha256 is checked first. The tensor files'
    headers are parsed and checked against the manifest before any tensor is read; any defect
    raises :class:`BundleIntegrityError` naming the file. Either layout (one
    ``tensors.safetensors`` or shards under ``tensors/``) is read through memory maps.

    ``vertex_types`` and ``relations`` (dotted names), when given, load only those: the
    others are left out of the result, their tensors never read."""
    root = Path(path)
    manifest = read_manifest(root, verify=verify)
    if verify:
        verify_files(root, manifest)
    check_tensor_files(root, manifest)
    require("torch", "torch")
    types = _chosen(vertex_types, manifest["vertex_types"], "vertex type")
    chosen = _chosen(
        None if relations is None else [str(getattr(r, "dotted", r)) for r in relations],
        manifest["relations"],
        "relation",
    )
    owners = {f"vertex.{t}" for t in types} | {f"relation.{r}" for r in chosen}
    keys = [k for k in manifest["tensors"] if owner(k) in owners]
    tensors = read_tensors(root, manifest, keys)
    where = root / (SHARD_FOLDER if "tensor_layout" in manifest else TENSOR_FILE)
    check_tensor_values(manifest, tensors, where)
    vertex_tensors = {name: _vertex_tensors(name, manifest["vertex_types"][name], tensors)
                      for name in types}  # fmt: skip
    relation_tensors = {}
    for dotted in chosen:
        entry = manifest["relations"][dotted]
        key = RelationKey.parse(dotted)
        features = entry.get("features") or {}
        relation_tensors[key] = RelationTensors(
            key,
            tensors[entry["tensor"]],
            tensors.get(relation_key(key, "multiplicity")),
            tensors.get(relation_key(key, "targets")),
            {
                p: tensors[relation_key(key, f"part.{p}.positions")]
                for p in (*PARTS, *EDGE_ROLES)
                if relation_key(key, f"part.{p}.positions") in tensors
            },
            {
                p: tensors[relation_key(key, f"negatives.{p}")]
                for p in PARTS
                if relation_key(key, f"negatives.{p}") in tensors
            },
            features=tensors.get(features["tensor"]) if features.get("tensor") else None,
            feature_names=tuple(features.get("columns", ())),
            encoders=tuple(features.get("encoders", ())),
        )
    return GraphBundle(root, manifest, vertex_tensors, relation_tensors)


def _chosen(names: Iterable[str] | None, known: dict[str, Any], what: str) -> list[str]:
    """``names`` in the manifest's order (all when ``None``); an unknown one is refused."""
    if names is None:
        return list(known)
    wanted = list(names)
    for name in wanted:
        if name not in known:
            raise InputError(
                f"no {what} {name!r} in this bundle (has: {', '.join(sorted(known))})",
                hint=f"name a {what} the bundle's manifest lists",
            )
    return [name for name in known if name in wanted]


def _vertex_tensors(name: str, entry: dict[str, Any], tensors: dict[str, Any]) -> VertexTypeTensors:
    label = entry.get("label") or {}
    codes = entry.get("codes", {})
    parts = entry.get("parts") or {}
    return VertexTypeTensors(
        name=name,
        count=entry["count"],
        features=tensors.get(vertex_key(name, "features")),
        feature_names=tuple(entry["features"]["columns"]),
        labels=tensors.get(vertex_key(name, "labels")),
        class_names=tuple(label.get("classes", ())),
        codes={p: tensors[c["tensor"]] for p, c in codes.items()},
        vocabularies={p: tuple(c["vocabulary"]) for p, c in codes.items()},
        parts={p: tensors[vertex_key(name, f"part.{p}.positions")] for p in PARTS if parts},
        part_flags={p: tensors[vertex_key(name, f"part.{p}.flags")] for p in PARTS if parts},
        targets=tensors.get(vertex_key(name, "targets")),
        encoders=tuple(entry["features"].get("encoders", ())),
    )


def inspect_bundle(path: str | Path) -> dict[str, Any]:
    """A summary of a bundle, with whether each file's hash verifies; loads no tensors."""
    root = Path(path)
    manifest = read_manifest(root, verify=False)
    check_tensor_files(root, manifest)
    try:
        read_manifest(root, verify=True)
        manifest_ok = True
    except BundleIntegrityError:
        manifest_ok = False
    files = [{**e, "verified": _file_ok(root, e)} for e in manifest["files"]]
    types = manifest["vertex_types"]
    return {
        "bundle_format": manifest["bundle_format"],
        "graphmill_version": manifest["graphmill_version"],
        "name": manifest["name"],
        "source": manifest["source"],
        "ids": manifest["ids"],
        "vertices": {t: e["count"] for t, e in types.items()},
        "relations": {r: e["count"] for r, e in manifest["relations"].items()},
        "features": {
            t: {"width": e["features"]["width"], "columns": e["features"]["columns"]}
            for t, e in types.items()
        },
        "codes": {
            t: {p: len(c["vocabulary"]) + 1 for p, c in e.get("codes", {}).items()}
            for t, e in types.items()
        },
        "classes": (manifest.get("label") or {}).get("classes", []),
        "parts": (manifest.get("split") or {}).get("sizes", {}),
        "task": manifest.get("task"),
        "leakage": manifest.get("leakage"),
        "counts": manifest["counts"],
        "validation": manifest.get("validation"),
        "warnings": manifest.get("warnings", []),
        "lineage": manifest.get("lineage"),
        "drift_gate": (manifest.get("comparison") or {}).get("gate"),
        "manifest_sha256": manifest.get("manifest_sha256"),
        "manifest_verified": manifest_ok,
        "files": files,
        "verified": manifest_ok and all(f["verified"] for f in files),
        "stale": read_stale_note(root),
    }
