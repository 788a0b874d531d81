"""A relation's edges as bundle content: the endpoint tensors and the edge table.

Contract: :func:`emit_edges` puts ``relation.<key>.endpoints`` (int64 [2, E]), the merged
copies' ``multiplicity`` (float32 [E]) and ``tables/edges/<key>.parquet`` (``source_index``,
``target_index``, [``multiplicity``], the declared properties of each edge's snapshot row)
into the content. :class:`DeferredEdges` is the same relation left in its engine as an
:class:`EdgeStream`, emitted when the bundle is written: into memory for a bundle in one
tensor file, or streamed into shards (:mod:`graphmill.transform._sharded`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import pyarrow as pa

from graphmill.bundle import relation_key, table_path
from graphmill.spec import RelationKey
from graphmill.transform._edge_stream import EdgeStream
from graphmill.transform._edges import EdgeArrays

if TYPE_CHECKING:  # the writer imports this module
    from graphmill.transform._writer import BundleContent


@dataclass(frozen=True)
class DeferredEdges:
    key: RelationKey
    stream: EdgeStream
    reverse: bool  # the reverse relation of the stream's (edges.add_reverse)
    properties: pa.Table  # the declared properties of every snapshot row

    def edges(self) -> EdgeArrays:
        return self.stream.edges(reverse=self.reverse)


def endpoints_meaning(key: RelationKey) -> str:
    return f"{key.dotted}: row 0 source index, row 1 target index"


def multiplicity_meaning(key: RelationKey) -> str:
    return f"{key.dotted}: number of repeated copies merged into each edge"


def edge_table(edges: EdgeArrays, properties: pa.Table) -> pa.Table:
    """The edge table's rows for ``edges`` (a whole relation or a batch of it)."""
    columns: dict[str, object] = {"source_index": edges.source, "target_index": edges.target}
    if edges.multiplicity is not None:
        columns["multiplicity"] = edges.multiplicity
    table = pa.table(columns)
    kept = properties.take(pa.array(edges.rows, pa.int64()))
    for name in kept.column_names:
        table = table.append_column(name, kept.column(name))
    return table


def emit_edges(
    content: BundleContent, key: RelationKey, edges: EdgeArrays, properties: pa.Table
) -> str:
    """Add the relation's tensors and edge table to ``content``; returns the endpoints'
    tensor key."""
    endpoints = np.stack([edges.source, edges.target]).astype(np.int64).reshape(2, len(edges))
    tensor = content.add_tensor(relation_key(key, "endpoints"), endpoints, endpoints_meaning(key))
    if edges.multiplicity is not None:
        content.add_tensor(
            relation_key(key, "multiplicity"),
            edges.multiplicity.astype(np.float32),
            multiplicity_meaning(key),
        )
    content.tables[table_path("edges", key.dotted)] = edge_table(edges, properties)
    return tensor
