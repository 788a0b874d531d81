"""Structural checks of a bundle that run before any library touches its bytes.

Every defect becomes :class:`BundleIntegrityError` naming the file: a JSON document that is
too large, nested too deeply, holds a huge integer or a ``NaN``; a safetensors file whose
header is truncated, garbage or oversized (the format: an 8-byte little-endian header
length, then that many bytes of JSON mapping each tensor to ``dtype``, ``shape`` and
``data_offsets`` into the data that follows); tensors that the manifest does not list, or
whose shapes contradict the manifest's counts (a resealed manifest cannot hide that); index
tensors that point outside their vertex type.
"""

from __future__ import annotations

import json
import math
import struct
from pathlib import Path
from typing import Any

from graphmill.errors import BundleIntegrityError

#: Largest manifest read (vocabularies make it grow; 256 MiB is far beyond any real one).
MAX_MANIFEST_BYTES = 256 << 20
#: Largest safetensors header, the limit the safetensors library itself enforces.
MAX_HEADER_BYTES = 100_000_000
#: safetensors dtype names of the three tensor dtypes a bundle holds, with item sizes.
DTYPES = {"F32": ("float32", 4), "I64": ("int64", 8), "BOOL": ("bool", 1)}
_REBUILD = "the bundle was altered or damaged; build it again"


def short_value(value: Any, limit: int = 80) -> str:
    """``repr`` of a value for a message, capped (a manifest may hold a huge string or
    integer)."""
    try:
        text = repr(value)
    except ValueError:  # an integer too long to print
        return "a huge integer"
    return capped(text, limit)


def capped(text: str, limit: int = 160) -> str:
    return text if len(text) <= limit else text[:limit] + "..."


def _constant(name: str) -> Any:
    raise ValueError(f"{name} is not a JSON number")


def parse_json(raw: bytes, file: Path, what: str) -> Any:
    """Strict JSON: UTF-8, no ``NaN``/``Infinity``, bounded nesting and integer size."""
    try:
        return json.loads(raw.decode("utf-8"), parse_constant=_constant)
    except RecursionError:
        reason = "it is nested too deeply"
    except UnicodeDecodeError:
        reason = "it is not UTF-8 text"
    except ValueError as exc:  # JSONDecodeError, huge integers, NaN
        text = str(exc).splitlines()[0] if str(exc) else "unreadable"
        reason = "an integer is too long" if "integer string" in text else text[:160]
    raise BundleIntegrityError(
        f"{what} is not valid JSON ({reason})", file=str(file), hint=_REBUILD
    )


def read_bounded(path: Path, limit: int, what: str) -> bytes:
    size = path.stat().st_size
    if size > limit:
        raise BundleIntegrityError(
            f"{what} is {size:,} bytes, more than the {limit:,} a bundle's can be",
            file=str(path),
            hint=_REBUILD,
        )
    return path.read_bytes()


def read_tensor_header(path: Path) -> dict[str, dict[str, Any]]:
    """The tensor index of a safetensors file (``__metadata__`` dropped), fully checked: each
    dtype is one a bundle uses, each shape a list of counts, and the data offsets cover the
    data that follows the header exactly, without gaps or overlaps."""

    def bad(reason: str) -> BundleIntegrityError:
        return BundleIntegrityError(
            f"the tensor file's header is damaged: {reason}", file=str(path), hint=_REBUILD
        )

    if not path.is_file():
        raise BundleIntegrityError("the tensor file is missing", file=str(path), hint=_REBUILD)
    size = path.stat().st_size
    with open(path, "rb") as fh:
        prefix = fh.read(8)
        if len(prefix) < 8:
            raise bad(f"the file has {size} bytes, fewer than the 8 of the header length")
        (length,) = struct.unpack("<Q", prefix)
        if length > MAX_HEADER_BYTES:
            raise bad(f"it claims {length:,} bytes, more than the {MAX_HEADER_BYTES:,} allowed")
        if length > size - 8:
            raise bad(f"it claims {length:,} bytes, but only {size - 8:,} follow")
        header = parse_json(fh.read(length), path, "the tensor file's header")
    if not isinstance(header, dict):
        raise bad("it is not a JSON object")
    header.pop("__metadata__", None)
    spans = []
    for key, info in header.items():
        if not isinstance(info, dict) or set(info) != {"dtype", "shape", "data_offsets"}:
            raise bad(f"entry {key!r} is not {{dtype, shape, data_offsets}}")
        dtype, shape, offsets = info["dtype"], info["shape"], info["data_offsets"]
        if dtype not in DTYPES:
            raise bad(f"tensor {key!r} has dtype {dtype!r}; a bundle holds only F32, I64, BOOL")
        if not _counts(shape, None) or not _counts(offsets, 2) or offsets[0] > offsets[1]:
            raise bad(f"tensor {key!r} has a malformed shape or data_offsets")
        if offsets[1] - offsets[0] != math.prod(shape) * DTYPES[dtype][1]:
            raise bad(f"tensor {key!r}: its data_offsets do not fit dtype {dtype} {shape}")
        spans.append((offsets[0], offsets[1], key))
    end = 0
    for begin, stop, key in sorted(spans):
        if begin != end:
            raise bad(f"tensor {key!r} starts at byte {begin}, expected {end}")
        end = stop
    if end != size - 8 - length:
        raise bad(f"the tensors cover {end:,} data bytes, the file holds {size - 8 - length:,}")
    return {k: {"dtype": DTYPES[v["dtype"]][0], "shape": v["shape"]} for k, v in header.items()}


def _counts(value: Any, length: int | None) -> bool:
    return (
        isinstance(value, list)
        and (length is None or len(value) == length)
        and all(isinstance(n, int) and not isinstance(n, bool) and 0 <= n < 2**63 for n in value)
    )


def implied_shapes(manifest: dict[str, Any]) -> dict[str, list[int]]:
    """The shape each tensor must have, from the manifest's counts, widths and part sizes."""
    shapes: dict[str, list[int]] = {}
    for name, entry in manifest["vertex_types"].items():
        n = entry["count"]
        features = entry["features"]
        if features["tensor"] is not None:
            shapes[features["tensor"]] = [n, features["width"]]
        if entry["label"] is not None:
            shapes[entry["label"]["tensor"]] = [n]
        for code in entry["codes"].values():
            shapes[code["tensor"]] = [n]
        if entry["parts"] is not None:
            for part, size in entry["parts"]["sizes"].items():
                shapes[f"vertex.{name}.part.{part}.positions"] = [size]
                shapes[f"vertex.{name}.part.{part}.flags"] = [n]
    for dotted, entry in manifest["relations"].items():
        shapes[entry["tensor"]] = [2, entry["count"]]
        if entry["merged"]:
            shapes[f"relation.{dotted}.multiplicity"] = [entry["count"]]
        features = entry.get("features")
        if features is not None:
            if features["tensor"] is not None:
                shapes[features["tensor"]] = [entry["count"], features["width"]]
            for code in features["codes"].values():
                shapes[code] = [entry["count"]]
        for part, size in _edge_part_sizes(entry).items():
            shapes[f"relation.{dotted}.part.{part}.positions"] = [size]
        negatives = (entry.get("link_split") or {}).get("negatives") or {}
        for part, size in negatives.get("counts", {}).items():
            shapes[f"relation.{dotted}.negatives.{part}"] = [2, size]
    task = manifest.get("task") or {}
    if task.get("kind", "").startswith("edge-"):
        shapes[task["tensor"]] = [manifest["relations"][task["relation"]]["count"]]
    if task.get("kind", "").startswith("vertex-"):
        shapes[task["tensor"]] = [manifest["vertex_types"][task["vertex_type"]]["count"]]
    return shapes


def _edge_part_sizes(entry: dict[str, Any]) -> dict[str, int]:
    """Edge parts of an edge task (``parts``) or a links task (``link_split``)."""
    split = entry.get("link_split") or entry.get("parts") or {}
    return dict(split.get("sizes", {}))


def check_tensor_file(root: Path, manifest: dict[str, Any], tensor_file: str) -> None:
    """The tensor file's header agrees with the manifest's tensor index and counts."""
    path = root / tensor_file
    header = read_tensor_header(path)
    index = manifest["tensors"]

    def refuse(message: str) -> BundleIntegrityError:
        return BundleIntegrityError(message, file=str(path), hint=_REBUILD)

    for key in sorted(set(index) ^ set(header)):
        raise refuse(f"tensor {key!r} is in only one of the manifest and the tensor file")
    for key, want in index.items():
        got = header[key]
        if got["dtype"] != want["dtype"] or got["shape"] != want["shape"]:
            raise refuse(
                f"tensor {key!r} is {got['dtype']} {got['shape']}, the manifest says "
                f"{want['dtype']} {want['shape']}"
            )
    _check_implied(manifest, header, refuse)


def _check_implied(manifest: dict[str, Any], shapes: dict[str, Any], refuse: Any) -> None:
    for key, shape in implied_shapes(manifest).items():
        if key not in shapes:
            raise refuse(f"tensor {key!r}, which the manifest's entries need, is missing")
        if shapes[key]["shape"] != shape:
            raise refuse(
                f"tensor {key!r} has shape {shapes[key]['shape']}, but the manifest's counts "
                f"imply {shape}"
            )


def check_shards(root: Path, manifest: dict[str, Any]) -> None:
    """A sharded bundle: each tensor's pieces follow each other and cover it, every piece
    file is one of the bundle's files, and each file's header holds exactly the pieces the
    index puts there, with their dtypes and shapes; a missing file is named."""
    index = manifest["tensors"]
    listed = {entry["path"] for entry in manifest["files"]}
    expected: dict[str, dict[str, dict[str, Any]]] = {}

    def refuse_in(file: Path) -> Any:
        return lambda message: BundleIntegrityError(message, file=str(file), hint=_REBUILD)

    refuse = refuse_in(root / "manifest.json")
    for key, entry in sorted(index.items()):
        pieces, axis, shape = entry.get("pieces"), entry.get("axis"), entry["shape"]
        if pieces is None or axis is None or axis >= len(shape):
            raise refuse(f"tensor {key!r} has no pieces, or no axis of its shape")
        at = 0
        for piece in pieces:
            if piece["start"] != at or piece["stop"] < at:
                raise refuse(f"tensor {key!r}: its pieces do not follow each other")
            if piece["file"] not in listed:
                raise refuse(f"tensor {key!r} names {piece['file']!r}, not among the files")
            part = [*shape[:axis], piece["stop"] - at, *shape[axis + 1 :]]
            held = expected.setdefault(piece["file"], {})
            if key in held:
                raise refuse(f"tensor {key!r} has two pieces in {piece['file']!r}")
            held[key] = {"dtype": entry["dtype"], "shape": part}
            at = piece["stop"]
        if at != shape[axis]:
            raise refuse(f"tensor {key!r}: its pieces cover {at} of {shape[axis]} along {axis}")
    for file, want in sorted(expected.items()):
        path = root / file
        header = read_tensor_header(path)
        for key in sorted(set(want) ^ set(header)):
            raise refuse_in(path)(f"tensor {key!r} is in only one of the manifest and this file")
        for key, w in want.items():
            if header[key] != w:
                raise refuse_in(path)(
                    f"tensor {key!r} is {header[key]['dtype']} {header[key]['shape']} here, "
                    f"the manifest says {w['dtype']} {w['shape']}"
                )
    _check_implied(manifest, index, refuse)


def check_tensor_values(manifest: dict[str, Any], tensors: dict[str, Any], file: Path) -> None:
    """Index tensors stay inside their vertex type (and labels inside the classes)."""
    counts = {name: e["count"] for name, e in manifest["vertex_types"].items()}
    ranges: list[tuple[str, Any, int, int]] = []
    for name, entry in manifest["vertex_types"].items():
        if entry["label"] is not None:
            classes = len(entry["label"]["classes"])
            ranges.append((entry["label"]["tensor"], None, -1, classes - 1))
        for code in entry["codes"].values():
            ranges.append((code["tensor"], None, 0, code["unknown_code"]))
        for part in (entry["parts"] or {}).get("sizes", {}):
            ranges.append((f"vertex.{name}.part.{part}.positions", None, 0, counts[name] - 1))
    for dotted, entry in manifest["relations"].items():
        for tensor in [entry["tensor"]] + [
            key for key in tensors if key.startswith(f"relation.{dotted}.negatives.")
        ]:
            ranges.append((tensor, 0, 0, counts.get(entry["source_type"], 0) - 1))
            ranges.append((tensor, 1, 0, counts.get(entry["target_type"], 0) - 1))
        for part in _edge_part_sizes(entry):
            ranges.append((f"relation.{dotted}.part.{part}.positions", None, 0, entry["count"] - 1))
    for key, row, low, high in ranges:
        if key not in tensors:  # not loaded (one relation or vertex type at a time)
            continue
        values = tensors[key] if row is None else tensors[key][row]
        if values.numel() and (int(values.min()) < low or int(values.max()) > high):
            where = "" if row is None else f" row {row}"
            raise BundleIntegrityError(
                f"tensor {key!r}{where} holds values outside {low}..{high}",
                file=str(file),
                hint=_REBUILD,
            )


def check_manifest_counts(manifest: dict[str, Any], file: Path) -> None:
    """The manifest agrees with itself: relation endpoints are declared vertex types, and the
    ``counts`` section repeats the per-type and per-relation counts."""
    types = manifest["vertex_types"]

    def refuse(message: str) -> BundleIntegrityError:
        return BundleIntegrityError(message, file=str(file), hint=_REBUILD)

    for dotted, entry in manifest["relations"].items():
        for end in ("source_type", "target_type"):
            if entry[end] not in types:
                raise refuse(f"relation {dotted!r} names {entry[end]!r}, not a vertex type here")
    listed_files = {entry["path"] for entry in manifest["files"]}
    tables = [(f"vertex_types.{n}.table", e["table"]) for n, e in types.items()]
    tables += [
        (f"vertex_types.{n}.features.table", e["features"]["table"]) for n, e in types.items()
    ]
    tables += [
        (f"vertex_types.{n}.parts.table", (e["parts"] or {}).get("table")) for n, e in types.items()
    ]
    tables += [(f"relations.{n}.table", e["table"]) for n, e in manifest["relations"].items()]
    tables += [
        (f"relations.{n}.{k}.table", e[k]["table"])
        for n, e in manifest["relations"].items()
        for k in ("parts", "link_split")
        if e.get(k)
    ]
    for key, table in tables:
        if table is not None and table not in listed_files:
            raise refuse(
                f"{key} names {capped(table, 80)!r}, which is not among the bundle's files"
            )
    for section, entries in (("vertices", types), ("edges", manifest["relations"])):
        listed = manifest["counts"][section]
        for name, entry in entries.items():
            if listed.get(name) != entry["count"]:
                raise refuse(
                    f"counts.{section} says {short_value(listed.get(name))} for {name!r}, "
                    f"its own entry says {short_value(entry['count'])}"
                )
