"""A generated heterogeneous property graph, as Arrow tables and as Gremlin write maps.

Three vertex labels and three edge labels, string ids, properties of five kinds (string,
integer, float, boolean, datetime at millisecond precision, as java.util.Date holds them)
with some values missing, and repeated (parallel) edges. Seeded: the same arguments give the
same graph.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

import numpy as np
import pyarrow as pa
from gremlin_helpers import edge, vertex

EPOCH_MS_2020 = 1_577_836_800_000  # 2020-01-01T00:00:00Z in ms since the Unix epoch
UTC = pa.timestamp("us", tz="UTC")
LABELS = {"member": "gd_member", "shop": "gd_shop", "item": "gd_item"}
EDGE_LABELS = {"follows": "gd_follows", "buys": "gd_buys", "sells": "gd_sells"}


def _missing(rng: np.random.Generator, values: np.ndarray, rate: float) -> pa.Array:
    array = pa.array(values)
    return pa.array(values, mask=rng.random(len(values)) < rate, type=array.type)


def _times(rng: np.random.Generator, n: int) -> pa.Array:
    ms = EPOCH_MS_2020 + rng.integers(0, 3 * 365 * 86_400_000, n)
    return pa.array(ms * 1000, pa.int64()).cast(UTC)


def generate(members: int, shops: int, items: int, edges: int, seed: int = 7) -> dict[str, Any]:
    """``{"vertices": {type: table}, "edges": {relation: table}}``; id column ``id``,
    edge ends ``src``/``dst``, edge ids ``eid``; ``edges`` is the total over relations."""
    rng = np.random.default_rng(seed)
    member_ids = np.char.add("m", np.arange(members).astype(str))
    shop_ids = np.char.add("s", np.arange(shops).astype(str))
    item_ids = np.char.add("i", np.arange(items).astype(str))
    vertices = {
        "member": pa.table(
            {
                "id": member_ids,
                "name": np.char.add("name-", rng.integers(0, members, members).astype(str)),
                "age": _missing(rng, rng.integers(16, 90, members), 0.05),
                "score": rng.normal(0, 1, members),
                "active": _missing(rng, rng.random(members) < 0.7, 0.02),
                "joined": _times(rng, members),
            }
        ),
        "shop": pa.table(
            {
                "id": shop_ids,
                "city": rng.choice(np.array(["oslo", "lima", "pune", "kyiv"]), shops),
                "rating": _missing(rng, np.round(rng.uniform(1, 5, shops), 2), 0.1),
            }
        ),
        "item": pa.table(
            {
                "id": item_ids,
                "price": np.round(rng.uniform(0.5, 500, items), 2),
                "stock": rng.integers(0, 1000, items),
            }
        ),
    }
    shares = {"follows": 0.4, "buys": 0.4, "sells": 0.2}
    ends = {
        "follows": (member_ids, member_ids),
        "buys": (member_ids, item_ids),
        "sells": (shop_ids, item_ids),
    }
    tables: dict[str, pa.Table] = {}
    for name, share in shares.items():
        n = int(edges * share)
        src, dst = ends[name]
        columns: dict[str, Any] = {
            "eid": np.char.add(name[0], np.arange(n).astype(str)),
            "src": src[rng.integers(0, len(src), n)],
            "dst": dst[rng.integers(0, len(dst), n)],
        }
        if name == "follows":
            columns["weight"] = rng.random(n)
            columns["since"] = rng.integers(2000, 2024, n)
        elif name == "buys":
            columns["amount"] = _missing(rng, np.round(rng.uniform(1, 99, n), 2), 0.03)
            columns["at"] = _times(rng, n)
        else:
            columns["listed"] = rng.random(n) < 0.5
        tables[name] = pa.table(columns)
    return {"vertices": vertices, "edges": tables}


def gremlin_maps(graph: dict[str, Any]) -> tuple[list[dict[Any, Any]], list[dict[Any, Any]]]:
    """mergeV / mergeE maps of ``graph`` (missing values left out; times as naive UTC, which
    gremlinpython sends as java.util.Date)."""

    def plain(row: dict[str, Any]) -> dict[str, Any]:
        out = {}
        for key, value in row.items():
            if value is None:
                continue
            if isinstance(value, dt.datetime):
                value = value.astimezone(dt.UTC).replace(tzinfo=None)
            out[key] = value
        return out

    vertices = [
        vertex(row.pop("id"), LABELS[name], **plain(row))
        for name, table in graph["vertices"].items()
        for row in table.to_pylist()
    ]
    edges = [
        edge(row.pop("eid"), EDGE_LABELS[name], row.pop("src"), row.pop("dst"), **plain(row))
        for name, table in graph["edges"].items()
        for row in table.to_pylist()
    ]
    return vertices, edges


def shared_spec_parts() -> tuple[dict[str, Any], list[dict[str, Any]]]:
    """vertex_types and relations, the same for the server and the dump."""
    props = {
        "member": ["name", "age", "score", "active", "joined"],
        "shop": ["city", "rating"],
        "item": ["price", "stock"],
    }
    vertex_types = {
        name: {"match": LABELS[name], "properties": {p: {} for p in keys}}
        for name, keys in props.items()
    }
    relations = [
        {
            "from": "member",
            "name": "follows",
            "to": "member",
            "match": "gd_follows",
            "properties": {"weight": {}, "since": {}},
        },
        {
            "from": "member",
            "name": "buys",
            "to": "item",
            "match": "gd_buys",
            "properties": {"amount": {}, "at": {}},
        },
        {
            "from": "shop",
            "name": "sells",
            "to": "item",
            "match": "gd_sells",
            "properties": {"listed": {}},
        },
    ]
    return vertex_types, relations
