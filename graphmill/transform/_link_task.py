"""The ``links`` task: parts, message/supervision edges and negatives of one relation.

Contract: each edge of a listed relation (and of its ``rev_`` relation when
``edges.add_reverse`` adds one) gets a part: by a keyed hash of its (source ID, relation,
target ID) (:mod:`graphmill.transform._edge_splits`), or by time (``by_time``: the edge's or
an endpoint's timestamp against the cut points; an undirected pair takes its earliest time;
untimed edges get no part), or from keyed-hash parts of its two endpoint vertices
(``unseen_vertices``). The reverse relation's edges are keyed in the forward orientation, so
an edge and its reverse always share a part. ``supervision_share`` splits the train edges
into disjoint message and supervision edges by a second keyed hash. Negatives
(:mod:`graphmill.transform._negatives`) are drawn for the forward relation only. Adds
``relation.<key>.part.<part>.positions`` (train, validation, test, and message/supervision),
``relation.<key>.negatives.<part>``, ``tables/edge_parts/<key>.parquet`` and the relation's
``link_split`` manifest entry.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pyarrow as pa

from graphmill._spec_links import cut_value
from graphmill.bundle import relation_key, table_path
from graphmill.spec import LinkOptions, PipelineSpec, RelationKey
from graphmill.transform._edge_splits import (
    NO_PART,
    PARTS,
    edge_keys,
    keyed_unit_interval,
    parts_by_fraction,
    supervision_flags,
    time_parts,
    unseen_vertex_parts,
    vertex_keys,
)
from graphmill.transform._edges import EdgeArrays
from graphmill.transform._indexing import VertexIndex
from graphmill.transform._negatives import negatives_generator, pair_codes, sample_negatives
from graphmill.transform._timestamps import as_text, cut_point, is_time, time_numbers

ASSIGNMENT = (
    "blake2b keyed by the seed over (source ID, relation, target ID) in the forward "
    "orientation; undirected: the two IDs sorted"
)


def add_link_split(
    content: Any,
    spec: PipelineSpec,
    key: RelationKey,
    edges: EdgeArrays,
    properties: pa.Table,
    ends: tuple[VertexIndex, VertexIndex],
    *,
    forward: RelationKey,
    negatives: bool = True,
) -> dict[str, int]:
    """Add the link split of ``key`` (``forward`` is itself, or the relation it reverses);
    without ``negatives`` none are drawn (the check stage's leakage audit reads none)."""
    assert spec.task is not None and spec.task.links is not None
    links = spec.task.links
    is_reverse = key != forward
    rel = spec.relation(forward)
    ids = [ends[0].ids.take(pa.array(edges.source)), ends[1].ids.take(pa.array(edges.target))]
    fwd_ids = ids[::-1] if is_reverse else ids
    keys = edge_keys(
        fwd_ids[0].to_pylist(), forward.name, fwd_ids[1].to_pylist(), undirected=rel.undirected
    )
    entry: dict[str, Any] = {"reverse_of": forward.dotted if is_reverse else None}
    fractions = (spec.split.train, spec.split.validation, spec.split.test)
    if links.by_time is not None:
        part_of = _time_parts(spec, links, edges, properties, ends, is_reverse, keys, entry)
    elif links.unseen_vertices:
        vertex_part = [
            parts_by_fraction(
                keyed_unit_interval(vertex_keys(vi.ids.to_pylist()), spec.split.seed), fractions
            )
            for vi in ends
        ]
        part_of = unseen_vertex_parts(vertex_part[0][edges.source], vertex_part[1][edges.target])
        entry["assignment"] = (
            "unseen vertices: the later part of the two endpoints' keyed-hash parts"
        )
    else:
        part_of = parts_by_fraction(keyed_unit_interval(keys, spec.split.seed), fractions)
        entry["assignment"] = ASSIGNMENT
    positions = {p: np.flatnonzero(part_of == i).astype(np.int64) for i, p in enumerate(PARTS)}
    columns: dict[str, Any] = {
        "edge": pa.array(np.arange(len(edges), dtype=np.int64)),
        "part": pa.array([PARTS[c] if c != NO_PART else None for c in part_of], pa.string()),
    }
    if links.supervision_share is not None:
        held = supervision_flags(keys, spec.split.seed, links.supervision_share)
        train = part_of == 0
        positions["message"] = np.flatnonzero(train & ~held).astype(np.int64)
        positions["supervision"] = np.flatnonzero(train & held).astype(np.int64)
        columns["supervision"] = pa.array(held, pa.bool_(), mask=~train)
    for part, found in positions.items():
        content.add_tensor(
            relation_key(key, f"part.{part}.positions"),
            found,
            f"{key.dotted}: sorted edge positions in {part}",
        )
    entry["table"] = table_path("edge_parts", key.dotted)
    content.tables[entry["table"]] = pa.table(columns)
    entry["sizes"] = {p: len(v) for p, v in positions.items()}
    entry["without_part"] = int((part_of == NO_PART).sum())
    entry["seed"] = spec.split.seed
    entry["fractions"] = None if links.by_time else dict(zip(PARTS, fractions, strict=True))
    entry["supervision_share"] = links.supervision_share
    entry["unseen_vertices"] = links.unseen_vertices
    entry["negatives"] = None
    if negatives and not is_reverse:
        entry["negatives"] = _add_negatives(content, spec, key, edges, positions, rel.undirected)
    content.manifest["relations"][key.dotted]["link_split"] = entry
    return {p: len(positions[p]) for p in PARTS}


def _time_parts(
    spec: PipelineSpec,
    links: LinkOptions,
    edges: EdgeArrays,
    properties: pa.Table,
    ends: tuple[VertexIndex, VertexIndex],
    is_reverse: bool,
    keys: list[bytes],
    entry: dict[str, Any],
) -> np.ndarray:
    cut = links.by_time
    assert cut is not None
    where = "task.by_time.property"
    if cut.of == "edge":
        column = properties.column(cut.property).take(pa.array(edges.rows, pa.int64()))
    else:
        side = (cut.of == "source") != is_reverse  # the forward source is the reverse target
        vi, at = (ends[0], edges.source) if side else (ends[1], edges.target)
        column = vi.table.column(cut.property).take(pa.array(at, pa.int64()))
    times = time_numbers(column, where=where)
    # An undirected pair (or repeated edges) takes the earliest time of its copies.
    _, group = np.unique(np.asarray(keys, dtype=object), return_inverse=True)
    earliest = np.full(group.max() + 1 if len(group) else 0, np.inf)
    np.minimum.at(earliest, group, np.where(np.isnan(times), np.inf, times))
    earliest = np.where(np.isinf(earliest), np.nan, earliest)
    times = earliest[group]
    timed = is_time(column.type)
    low, high = (
        # A fraction counts each distinct edge (an undirected pair) once.
        cut_point(cut_value(value, name), earliest, time_column=timed, where=f"task.by_time.{name}")
        for name, value in (
            ("validation_from", cut.validation_from),
            ("test_from", cut.test_from),
        )
    )
    entry["assignment"] = f"by time: {cut.of} property {cut.property!r}"
    entry["by_time"] = {
        "property": cut.property,
        "of": cut.of,
        "validation_from": as_text(low, time_column=timed),
        "test_from": as_text(high, time_column=timed),
    }
    return time_parts(times, low, high)


def _add_negatives(
    content: Any,
    spec: PipelineSpec,
    key: RelationKey,
    edges: EdgeArrays,
    positions: dict[str, np.ndarray],
    undirected: bool,
) -> dict[str, Any]:
    assert spec.task is not None and spec.task.links is not None
    links = spec.task.links
    width = int(content.manifest["vertex_types"][key.target_type]["count"])
    known = pair_codes(edges.source, edges.target, width)
    if undirected and key.source_type == key.target_type:
        known = np.concatenate([known, pair_codes(edges.target, edges.source, width)])
    fitted = positions.get("message", positions["train"])
    weights = None
    if links.sampling == "by-degree":
        weights = np.bincount(edges.target[fitted], minlength=width)
    counts = {}
    for part in links.negative_parts:
        chosen = (
            positions["supervision"]
            if part == "train" and "supervision" in positions
            else (positions[part])
        )
        pairs = sample_negatives(
            edges.source[chosen],
            known,
            target_count=width,
            per_positive=links.per_positive,
            weights=weights,
            rng=negatives_generator(spec.split.seed, key.dotted, part),
            where=key.dotted,
        )
        content.add_tensor(
            relation_key(key, f"negatives.{part}"),
            pairs,
            f"{key.dotted}: {links.per_positive} non-edges per {part} positive, in positive order",
        )
        counts[part] = int(pairs.shape[1])
    return {
        "per_positive": links.per_positive,
        "sampling": links.sampling,
        "counts": counts,
        "weights": "degree among the train (message) edges" if weights is not None else "uniform",
        "generator": "numpy PCG64([seed, blake2b(relation, part)]), rejection of known edges",
    }
