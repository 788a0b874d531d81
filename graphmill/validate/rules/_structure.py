"""Structure rules as pure functions over Arrow ID columns.

Inputs are string arrays (``pa.Array`` or ``pa.ChunkedArray``) of original IDs; outputs are
boolean masks (one entry per input row), small tables or counts. Nothing here reads files
or keeps state, so another engine can implement the same contracts and be compared with
these result for result. Pair lookups run on integer codes from one dictionary encoding
of both endpoint columns: ``code(source) * n + code(target)`` identifies a pair.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

Column = pa.Array | pa.ChunkedArray

LIST_SEPARATOR = "\x1f"  # joins list elements when whole rows are compared
NULL_ELEMENT = "\x00"  # stands for a null element inside a list


def _flat(column: Column) -> pa.Array:
    return column.combine_chunks() if isinstance(column, pa.ChunkedArray) else column


def dangling_mask(endpoint_ids: Column, vertex_ids: Column) -> pa.BooleanArray:
    """True where an endpoint is not among ``vertex_ids``."""
    return pc.invert(pc.is_in(_flat(endpoint_ids), value_set=_flat(vertex_ids)))


def duplicate_counts(ids: Column) -> pa.Table:
    """Values that occur more than once: columns ``value`` and ``copies`` (occurrences)."""
    grouped = pa.table({"value": _flat(ids)}).group_by("value", use_threads=False)
    counted = grouped.aggregate([([], "count_all")])
    several = counted.filter(pc.greater(counted.column("count_all"), 1))
    return pa.table({"value": several.column("value"), "copies": several.column("count_all")})


def shared_ids(ids_by_type: Mapping[str, Column]) -> pa.Table:
    """IDs that occur under more than one vertex type: columns ``vertex_id`` and ``types``
    (the number of types holding it)."""
    distinct = [pc.unique(_flat(ids)) for ids in ids_by_type.values()]
    every = pa.chunked_array(distinct, pa.string())
    counts = duplicate_counts(every)
    return pa.table({"vertex_id": counts.column("value"), "types": counts.column("copies")})


def self_loop_mask(sources: Column, targets: Column) -> pa.BooleanArray:
    """True where an edge goes from a vertex to itself."""
    return pc.equal(_flat(sources), _flat(targets))


def pair_codes(sources: Column, targets: Column) -> tuple[np.ndarray, np.ndarray, int]:
    """Integer codes of both endpoints from one shared dictionary, and its size ``n``."""
    both = pa.chunked_array([_flat(sources), _flat(targets)]).combine_chunks()
    encoded = both.dictionary_encode()
    codes = encoded.indices.to_numpy(zero_copy_only=False).astype(np.int64)
    half = len(sources)
    return codes[:half], codes[half:], max(len(encoded.dictionary), 1)


def reciprocated_mask(sources: Column, targets: Column) -> pa.BooleanArray:
    """True where the reverse edge (target → source) is in the same edge list.

    A self-loop is its own reverse, so it is True.
    """
    src, dst, n = pair_codes(sources, targets)
    keys = pa.array(src * n + dst)
    return pc.is_in(pa.array(dst * n + src), value_set=keys)


def reciprocity_counts(sources: Column, targets: Column) -> tuple[int, int]:
    """``(reciprocated, pairs)`` over distinct (source, target) pairs.

    Matches ``networkx.overall_reciprocity`` on ``nx.DiGraph(edges)``: repeated edges count
    once (a DiGraph holds a pair once); a self-loop counts among the pairs but is never
    reciprocated (``G.to_undirected()`` keeps it as one edge). The reciprocity is
    ``reciprocated / pairs``; networkx leaves it undefined for ``pairs == 0``.
    """
    src, dst, n = pair_codes(sources, targets)
    keys = np.unique(src * n + dst)
    s, t = keys // n, keys % n
    back = np.isin(t * n + s, keys, assume_unique=False) & (s != t)
    return int(back.sum()), len(keys)


def _groupable(column: Column) -> Column:
    """A column that group_by accepts: lists become their elements joined by a separator
    (a null element as NUL, so ``[null]``, ``[]`` and null stay apart)."""
    if not (pa.types.is_list(column.type) or pa.types.is_large_list(column.type)):
        return column
    as_text = pc.cast(_flat(column), pa.list_(pa.string()))
    offsets, flat = as_text.offsets, pc.fill_null(as_text.flatten(), NULL_ELEMENT)
    rebuilt = pa.ListArray.from_arrays(offsets, flat, mask=pc.is_null(as_text))
    return pc.binary_join(rebuilt, LIST_SEPARATOR)


def _keyed(edges: pa.Table) -> pa.Table:
    return pa.table({name: _groupable(edges.column(name)) for name in edges.column_names})


def exact_repeats(edges: pa.Table) -> pa.Table:
    """Rows whose every column equals another row's: ``source_id``, ``target_id`` and
    ``copies`` (occurrences) per repeated row. Extra copies = ``sum(copies - 1)``."""
    keyed = _keyed(edges)
    counted = keyed.group_by(keyed.column_names, use_threads=False).aggregate([([], "count_all")])
    several = counted.filter(pc.greater(counted.column("count_all"), 1))
    return pa.table(
        {
            "source_id": several.column("source_id"),
            "target_id": several.column("target_id"),
            "copies": several.column("count_all"),
        }
    )


def parallel_variants(edges: pa.Table) -> pa.Table:
    """Pairs joined by edges that differ in their properties: ``source_id``, ``target_id``
    and ``variants`` (distinct rows of the pair, above 1). Parallel edges =
    ``sum(variants - 1)``; exact repeats are not counted here."""
    keyed = _keyed(edges)
    distinct = keyed.group_by(keyed.column_names, use_threads=False).aggregate([])
    pairs = distinct.group_by(["source_id", "target_id"], use_threads=False).aggregate(
        [([], "count_all")]
    )
    several = pairs.filter(pc.greater(pairs.column("count_all"), 1))
    return pa.table(
        {
            "source_id": several.column("source_id"),
            "target_id": several.column("target_id"),
            "variants": several.column("count_all"),
        }
    )


def isolated_mask(vertex_ids: Column, endpoint_ids: Sequence[Column]) -> pa.BooleanArray:
    """True where a vertex is none of ``endpoint_ids`` (the endpoint columns, of every
    relation, on the sides where this vertex type stands)."""
    ids = _flat(vertex_ids)
    chunks = [_flat(c) for c in endpoint_ids if len(c)]
    if not chunks:
        return pc.is_valid(ids)
    touched = pc.unique(pa.chunked_array(chunks, pa.string()).combine_chunks())
    return pc.invert(pc.is_in(ids, value_set=touched))
