"""The ``edge-classes`` and ``edge-values`` tasks: an edge property as the target.

Contract: the task's relation is split into train / validation / test by a keyed hash of each
edge's (source ID, relation, target ID) (:mod:`graphmill.transform._edge_splits`; both
directions of an undirected pair share a part), with the spec's split fractions and seed.
Classes are the property's distinct values as strings in UTF-8 byte order, code ``-1`` where
missing (int64 [E]); numbers are standardized with the train edges' mean and standard
deviation (float32 [E], NaN where missing). Tensors: ``relation.<key>.targets`` and
``relation.<key>.part.<part>.positions`` (sorted edge positions, aligned with ``endpoints``);
table ``tables/edge_parts/<key>.parquet`` (edge position, part). With ``edges.add_reverse``
the added ``rev_`` relation gets parts too (no targets): each reverse edge is keyed in the
forward orientation, so it takes the part of the edge it reverses, and the reverse of an
evaluation edge is never a train edge.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pyarrow as pa

from graphmill.bundle import relation_key, table_path
from graphmill.spec import PipelineSpec, RelationKey
from graphmill.transform._edge_splits import PARTS, edge_parts
from graphmill.transform._edges import EdgeArrays
from graphmill.transform._indexing import VertexIndex
from graphmill.transform._labels import class_codes, label_strings
from graphmill.transform._targets import refuse_float_classes, standardize, target_numbers
from graphmill.transform._writer import BundleContent


def add_edge_task(
    content: BundleContent,
    spec: PipelineSpec,
    key: RelationKey,
    edges: EdgeArrays,
    properties: pa.Table,
    ends: tuple[VertexIndex, VertexIndex],
) -> dict[str, int]:
    """Add the parts and targets of the task relation ``key``; return the part sizes."""
    task = spec.task
    assert task is not None and task.property is not None
    positions = add_edge_parts(content, spec, key, edges, ends, forward=key)
    column = properties.column(task.property).take(pa.array(edges.rows, pa.int64()))
    where = "task.property"
    entry: dict[str, Any] = {"kind": task.kind, "relation": key.dotted, "property": task.property}
    if task.numeric:
        values = target_numbers(column, where=where, side="edge")
        targets, stats = standardize(values, positions["train"])
        meaning = f"{key.dotted}: {task.property} standardized on train edges, NaN: no target"
        entry["standardized"] = stats
    else:
        refuse_float_classes(column, where=where, side="edge")
        targets, classes = class_codes(label_strings(column, where=where))
        meaning = f"{key.dotted}: class code of {task.property} per edge, -1 missing"
        entry["classes"] = classes
    entry["tensor"] = content.add_tensor(relation_key(key, "targets"), targets, meaning)
    content.manifest["task"] = entry
    return {p: len(positions[p]) for p in PARTS}


def add_edge_parts(
    content: BundleContent,
    spec: PipelineSpec,
    key: RelationKey,
    edges: EdgeArrays,
    ends: tuple[VertexIndex, VertexIndex],
    *,
    forward: RelationKey,
) -> dict[str, np.ndarray]:
    """Add the edge parts of ``key`` (``forward``: itself, or the relation it reverses, whose
    orientation and name key the hash); return the sorted positions per part."""
    rel = spec.relation(forward)
    source_ids = ends[0].ids.take(pa.array(edges.source, pa.int64())).to_pylist()
    target_ids = ends[1].ids.take(pa.array(edges.target, pa.int64())).to_pylist()
    if key != forward:
        source_ids, target_ids = target_ids, source_ids
    split = spec.split
    fractions = (split.train, split.validation, split.test)
    part_of = edge_parts(
        source_ids,
        forward.name,
        target_ids,
        undirected=rel.undirected,
        fractions=fractions,
        seed=split.seed,
    )
    positions = {p: np.flatnonzero(part_of == i).astype(np.int64) for i, p in enumerate(PARTS)}
    for part in PARTS:
        content.add_tensor(
            relation_key(key, f"part.{part}.positions"),
            positions[part],
            f"{key.dotted}: sorted edge positions in {part}",
        )
    parts_table = table_path("edge_parts", key.dotted)
    content.tables[parts_table] = pa.table(
        {
            "edge": pa.array(np.arange(len(edges), dtype=np.int64)),
            "part": pa.array(np.asarray(PARTS, dtype=object)[part_of].tolist(), pa.string()),
        }
    )
    assignment = (
        "blake2b keyed by the seed over (source ID, relation, target ID); undirected: the "
        "two IDs sorted"
    )
    if key != forward:
        assignment = f"the part of the {forward.dotted} edge it reverses ({assignment})"
    content.manifest["relations"][key.dotted]["parts"] = {
        "table": parts_table,
        "sizes": {p: len(positions[p]) for p in PARTS},
        "seed": split.seed,
        "fractions": dict(zip(PARTS, fractions, strict=True)),
        "assignment": assignment,
    }
    return positions
