"""Checks on what a build is given, and the publishable form of the source provenance.

Each refusal is one :class:`~graphmill.errors.InputError` saying what is wrong and what to do.
"""

from __future__ import annotations

import re
from typing import Any

import pyarrow.compute as pc

from graphmill.bundle import canonical_json
from graphmill.errors import InputError
from graphmill.snapshot import Snapshot
from graphmill.spec import PipelineSpec
from graphmill.transform._indexing import VertexIndex

_USERINFO = re.compile(r"(?<=://)[^/@\s]*@")


def public_source(provenance: dict[str, Any]) -> dict[str, Any]:
    """Kind, location and queries, with any ``user:password@`` removed from the location."""
    return {
        "kind": str(provenance.get("kind", "")),
        "location": _USERINFO.sub("", str(provenance.get("location", ""))),
        "queries": [str(q) for q in provenance.get("queries", [])],
    }


def check_snapshot(spec: PipelineSpec, snapshot: Snapshot) -> None:
    hint = "pull again with the current spec"
    for name, vt in spec.vertex_types.items():
        if name not in snapshot.vertex_types:
            raise InputError(
                f"the snapshot has no vertex type {name!r}", file=str(snapshot.root), hint=hint
            )
        have = set(snapshot.value_kinds("vertices", name))  # column names, without reading
        for prop in vt.properties:
            if prop.name not in have:
                raise InputError(
                    f"the snapshot's {name!r} vertices have no property {prop.name!r}",
                    file=str(snapshot.root),
                    hint=hint,
                )
    for rel in spec.relations:
        if rel.key not in snapshot.relations:
            raise InputError(
                f"the snapshot has no relation {rel.key.dotted}", file=str(snapshot.root), hint=hint
            )


def check_summary(summary: Any) -> None:
    """The validation summary goes into the manifest as is: it must be plain, finite JSON."""
    if summary is None:
        return
    try:
        if not isinstance(summary, dict):
            raise TypeError(f"a {type(summary).__name__}, not a mapping")
        canonical_json(summary)
    except (TypeError, ValueError) as exc:
        raise InputError(
            f"the validation summary cannot go into the manifest ({exc})",
            hint="pass a mapping of strings, numbers, booleans, lists and mappings",
        ) from None


def check_unique(vi: VertexIndex) -> None:
    """Pseudonyms are 128 bits: a collision is astronomically unlikely, but never silent."""
    ids = vi.public_ids
    if len(ids) > 1 and not pc.all(pc.not_equal(ids.slice(1), ids.slice(0, len(ids) - 1))).as_py():
        raise InputError(
            f"two {vi.vertex_type!r} vertices got the same pseudonym", hint="use another key"
        )
