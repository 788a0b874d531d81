"""Reading a bundle's tensors, whichever the layout: one ``tensors.safetensors`` or shards
under ``tensors/`` (:mod:`graphmill._shards`). Headers are checked against the manifest
before any tensor is read; tensors are read through memory maps, only those asked for.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from graphmill._bundle_checks import capped, check_shards, check_tensor_file
from graphmill.errors import BundleIntegrityError

#: The tensor file of a bundle that is not sharded.
TENSOR_FILE = "tensors.safetensors"


def check_tensor_files(root: Path, manifest: dict[str, Any]) -> None:
    """The tensor files' headers agree with the manifest, whichever the layout."""
    if "tensor_layout" in manifest:
        check_shards(root, manifest)
    else:
        check_tensor_file(root, manifest, TENSOR_FILE)


def tensor_files(manifest: dict[str, Any]) -> dict[str, list[dict[str, Any]]]:
    """Tensor key -> its pieces (``file``, ``start``, ``stop`` along ``axis``); a bundle with
    one tensor file has one piece per tensor."""
    out = {}
    for key, entry in manifest["tensors"].items():
        whole = [{"file": TENSOR_FILE, "start": 0, "stop": (entry["shape"] or [0])[0]}]
        out[key] = entry.get("pieces", whole) if "tensor_layout" in manifest else whole
    return out


def read_tensors(root: Path, manifest: dict[str, Any], keys: list[str]) -> dict[str, Any]:
    """The tensors ``keys`` as torch tensors, each read through a memory map of its file(s)
    (``safetensors.safe_open``): only these bytes are read. A split tensor is allocated once
    and each piece copied into its place, so reading it needs its size plus one piece."""
    import torch

    pieces = tensor_files(manifest)
    out = {}
    for key in keys:
        entry, listed = manifest["tensors"][key], pieces[key]
        if len(listed) == 1:
            out[key] = _piece(root / listed[0]["file"], key)
            continue
        axis = entry.get("axis", 0)
        whole = torch.empty(entry["shape"], dtype=getattr(torch, entry["dtype"]))
        for piece in listed:
            part = _piece(root / piece["file"], key)
            whole.narrow(axis, piece["start"], piece["stop"] - piece["start"]).copy_(part)
        out[key] = whole
    return out


def _piece(path: Path, key: str) -> Any:
    from safetensors import safe_open

    try:
        with safe_open(str(path), framework="pt") as opened:
            return opened.get_tensor(key)
    except Exception as exc:  # the library's own errors: SafetensorError, OSError, ...
        raise BundleIntegrityError(
            f"the tensor file cannot be loaded ({capped(str(exc).splitlines()[0])})",
            file=str(path),
            hint="the bundle was altered or damaged; build it again",
        ) from exc
