"""Schema discovery on a Gremlin server: labels, edge ends, property keys and value kinds.

Counts cover the whole graph; property keys and their value kinds come from a sample: the
first ``sample_size`` elements of each label in id order (the same elements on every run,
so the result is reproducible). Only key names, kinds and counts are recorded, no values.
"""

from __future__ import annotations

from collections import Counter
from typing import Any, Protocol

from graphmill.connectors.gremlin import _traversals
from graphmill.connectors.gremlin._values import classify


class _Fetcher(Protocol):
    def fetch(self, bytecode: Any) -> list[Any]: ...


def value_kinds(values: list[Any]) -> dict[str, int]:
    """Kind counts of sampled values (List/Set values count their items)."""
    counts: Counter[str] = Counter()
    for value in values:
        items = value if isinstance(value, list | set | tuple) else [value]
        counts.update(classify(item)[0].split("-")[0] for item in items)
    return dict(sorted(counts.items()))


def _sampled_properties(
    pool: _Fetcher, *, edges: bool, label: str, size: int
) -> dict[str, dict[str, int]]:
    found = pool.fetch(_traversals.property_sample(edges, label, size).bytecode)
    groups: dict[str, list[Any]] = found[0] if found else {}
    return {str(key): value_kinds(list(values)) for key, values in sorted(groups.items())}


def _one(pool: _Fetcher, traversal: Any) -> dict[Any, int]:
    found = pool.fetch(traversal.bytecode)
    return dict(found[0]) if found else {}


def discover(pool: _Fetcher, sample_size: int) -> dict[str, Any]:
    """The discovery record stored in ``snapshot.json`` under ``discovery``."""
    vertex_counts: dict[str, int] = (pool.fetch(_traversals.label_counts(False).bytecode) or [{}])[
        0
    ]
    edge_counts: dict[str, int] = (pool.fetch(_traversals.label_counts(True).bytecode) or [{}])[0]
    pairs: dict[Any, int] = (pool.fetch(_traversals.edge_label_pairs().bytecode) or [{}])[0]
    ends: dict[str, list[dict[str, Any]]] = {}
    for (label, out_label, in_label), n in sorted(pairs.items()):
        ends.setdefault(label, []).append({"out": out_label, "in": in_label, "count": int(n)})
    vertex_labels = [
        {
            "label": label,
            "count": int(vertex_counts[label]),
            "properties": _sampled_properties(pool, edges=False, label=label, size=sample_size),
        }
        for label in sorted(vertex_counts)
    ]
    edge_labels = [
        {
            "label": label,
            "count": int(edge_counts[label]),
            "ends": ends.get(label, []),
            "properties": _sampled_properties(pool, edges=True, label=label, size=sample_size),
        }
        for label in sorted(edge_counts)
    ]
    return {
        "kind": "gremlin",
        "sample": f"first {sample_size} elements of each label in id order",
        "sample_size": sample_size,
        "vertex_labels": vertex_labels,
        "edge_labels": edge_labels,
    }
