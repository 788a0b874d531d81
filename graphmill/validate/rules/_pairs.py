"""Edge-pair rules as pure functions: reciprocity, one-way edges, repeats, parallel edges.

They run on integer codes: :func:`pair_codes` dictionary-encodes both endpoint columns of a
relation at once, so ``source * size + target`` is an integer key per (source, target)
pair and its reverse is ``target * size + source``. Every function takes the string
columns and computes the codes itself unless the caller passes them (``codes=``) to share
one encoding between rules; the results are the same either way.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TypeAlias

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

Column: TypeAlias = pa.Array | pa.ChunkedArray

LIST_SEPARATOR = "\x1f"  # joins list elements when whole rows are compared
NULL_ELEMENT = "\x00"  # stands for a null element inside a list


def _flat(column: Column) -> pa.Array:
    return column.combine_chunks() if isinstance(column, pa.ChunkedArray) else column


@dataclass(frozen=True)
class PairCodes:
    """Both endpoint columns as positions in one shared ``dictionary`` of IDs."""

    source: np.ndarray
    target: np.ndarray
    dictionary: pa.Array

    @property
    def size(self) -> int:
        return max(len(self.dictionary), 1)

    @property
    def keys(self) -> np.ndarray:
        return self.source * self.size + self.target

    @property
    def reverse_keys(self) -> np.ndarray:
        return self.target * self.size + self.source

    def subset(self, rows: np.ndarray) -> PairCodes:
        """The codes of some rows (a boolean mask or indices), same dictionary."""
        return PairCodes(self.source[rows], self.target[rows], self.dictionary)

    def decode(self, keys: np.ndarray) -> tuple[pa.Array, pa.Array]:
        """The (source, target) IDs of pair keys."""
        return self.dictionary.take(pa.array(keys // self.size)), self.dictionary.take(
            pa.array(keys % self.size)
        )


def pair_codes(sources: Column, targets: Column) -> PairCodes:
    """Code both endpoint columns with one dictionary encoding of their concatenation."""
    both = pa.chunked_array([_flat(sources), _flat(targets)], pa.string()).combine_chunks()
    encoded = both.dictionary_encode()
    codes = encoded.indices.to_numpy(zero_copy_only=False).astype(np.int64)
    half = len(sources)
    return PairCodes(codes[:half], codes[half:], encoded.dictionary)


def _sorted_unique(values: np.ndarray) -> np.ndarray:
    ordered = np.sort(values)
    keep = np.ones(len(ordered), dtype=bool)
    keep[1:] = ordered[1:] != ordered[:-1]
    return ordered[keep]


def _contains(sorted_values: np.ndarray, probes: np.ndarray) -> np.ndarray:
    """Whether each probe is in ``sorted_values``; probes are sorted first so that the
    binary searches walk memory in order."""
    found = np.zeros(len(probes), dtype=bool)
    if not len(sorted_values) or not len(probes):
        return found
    order = np.argsort(probes, kind="stable")
    ordered = probes[order]
    at = np.minimum(np.searchsorted(sorted_values, ordered), len(sorted_values) - 1)
    found[order] = sorted_values[at] == ordered
    return found


def reciprocated_mask(
    sources: Column, targets: Column, *, codes: PairCodes | None = None
) -> pa.BooleanArray:
    """True where the reverse edge (target → source) is in the same edge list.

    A self-loop is its own reverse, so it is True.
    """
    codes = codes or pair_codes(sources, targets)
    return pa.array(_contains(_sorted_unique(codes.keys), codes.reverse_keys))


def reciprocity_counts(
    sources: Column, targets: Column, *, codes: PairCodes | None = None
) -> tuple[int, int]:
    """``(reciprocated, pairs)`` over distinct (source, target) pairs.

    Matches ``networkx.overall_reciprocity`` on ``nx.DiGraph(edges)``: repeated edges count
    once (a DiGraph holds a pair once); a self-loop counts among the pairs but is never
    reciprocated (``G.to_undirected()`` keeps it as one edge). The reciprocity is
    ``reciprocated / pairs``; networkx leaves it undefined for ``pairs == 0``.
    """
    codes = codes or pair_codes(sources, targets)
    n = codes.size
    keys = _sorted_unique(codes.keys)
    s, t = keys // n, keys % n
    loops = s == t
    probes = np.sort((t * n + s)[~loops])  # a count needs no way back to each pair
    if not len(keys) or not len(probes):
        return 0, len(keys)
    at = np.minimum(np.searchsorted(keys, probes), len(keys) - 1)
    return int((keys[at] == probes).sum()), len(keys)


def distinct_pairs(sources: Column, targets: Column, *, codes: PairCodes | None = None) -> int:
    """The number of distinct (source, target) pairs."""
    return len(_sorted_unique((codes or pair_codes(sources, targets)).keys))


def _groupable(column: Column) -> Column:
    """A column that group_by accepts: lists become their elements joined by a separator
    (a null element as NUL, so ``[null]``, ``[]`` and null stay apart)."""
    if not (pa.types.is_list(column.type) or pa.types.is_large_list(column.type)):
        return column
    as_text = pc.cast(_flat(column), pa.list_(pa.string()))
    offsets, flat = as_text.offsets, pc.fill_null(as_text.flatten(), NULL_ELEMENT)
    rebuilt = pa.ListArray.from_arrays(offsets, flat, mask=pc.is_null(as_text))
    return pc.binary_join(rebuilt, LIST_SEPARATOR)


def distinct_rows(edges: pa.Table, *, codes: PairCodes | None = None) -> pa.Table:
    """One row per distinct edge row (every column compared): ``pair`` (its pair key) and
    ``copies``. Grouping runs on the integer pair key and the property columns."""
    codes = codes or pair_codes(edges.column("source_id"), edges.column("target_id"))
    props = [c for c in edges.column_names if c not in ("source_id", "target_id")]
    keyed = pa.table(
        {"pair": pa.array(codes.keys)}
        | {f"p{i}": _groupable(edges.column(c)) for i, c in enumerate(props)}
    )
    grouped = keyed.group_by(keyed.column_names, use_threads=False)
    counted = grouped.aggregate([([], "count_all")])
    return pa.table({"pair": counted.column("pair"), "copies": counted.column("count_all")})


def _named(codes: PairCodes, keys: pa.ChunkedArray, name: str, values: Column) -> pa.Table:
    sources, targets = codes.decode(keys.to_numpy())
    return pa.table({"source_id": sources, "target_id": targets, name: values})


def exact_repeats(
    edges: pa.Table, *, codes: PairCodes | None = None, distinct: pa.Table | None = None
) -> pa.Table:
    """Rows whose every column equals another row's: ``source_id``, ``target_id`` and
    ``copies`` (occurrences) per repeated row. Extra copies = ``sum(copies - 1)``.
    ``distinct``: :func:`distinct_rows` of ``edges`` with the same ``codes``."""
    codes = codes or pair_codes(edges.column("source_id"), edges.column("target_id"))
    distinct = distinct if distinct is not None else distinct_rows(edges, codes=codes)
    several = distinct.filter(pc.greater(distinct.column("copies"), 1))
    return _named(codes, several.column("pair"), "copies", several.column("copies"))


def parallel_variants(
    edges: pa.Table, *, codes: PairCodes | None = None, distinct: pa.Table | None = None
) -> pa.Table:
    """Pairs joined by edges that differ in their properties: ``source_id``, ``target_id``
    and ``variants`` (distinct rows of the pair, above 1). Parallel edges =
    ``sum(variants - 1)``; exact repeats are not counted here. Options as for
    :func:`exact_repeats`."""
    codes = codes or pair_codes(edges.column("source_id"), edges.column("target_id"))
    distinct = distinct if distinct is not None else distinct_rows(edges, codes=codes)
    pairs = distinct.group_by("pair", use_threads=False).aggregate([([], "count_all")])
    several = pairs.filter(pc.greater(pairs.column("count_all"), 1))
    return _named(codes, several.column("pair"), "variants", several.column("count_all"))
