"""The query texts of the local engine, one builder per operation.

Plain SQL over named tables (``e``: an edge table with ``source_id``, ``target_id`` and
property columns; ``v``: vertex IDs; ``m``: mapped edges ``s, t, row``), written so that
another SQL engine (Spark SQL) can run the same text. Strings compare by bytes: DuckDB's
default VARCHAR ordering and equality are binary (no collation is set), which is the order
the contracts ask for. Ties are broken by an explicit row column wherever order matters.
"""

from __future__ import annotations

from collections.abc import Sequence

import pyarrow as pa

from graphmill.engine.local._session import quote

ENDS = "source_id, target_id"


def order_by(keys: Sequence[str], row: str) -> str:
    """``canonical-order``: the row column of the table, in stable key order."""
    columns = ", ".join(f"{quote(k)} ASC NULLS LAST" for k in keys)
    return f"SELECT {row} FROM {{t}} ORDER BY {columns}, {row}"


def first_rows(table: str) -> str:
    """``vertex-index``: first row per ID, in ID order."""
    return f"SELECT min(row) AS row FROM {table} GROUP BY id ORDER BY id"


def endpoint_positions(endpoints: str, vertices: str) -> str:
    """``endpoint-index``: (row, position) of each endpoint that is a vertex; ``endpoints``
    has columns ``id`` and ``row``."""
    return f"SELECT e.row, v.position FROM {endpoints} e JOIN {vertices} v ON e.id = v.id"


def dangling_counts(m: str) -> str:
    return (
        f"SELECT count(*) FILTER (WHERE s = -1 AND t = -1), "
        f"count(*) FILTER (WHERE s = -1 AND t <> -1), "
        f"count(*) FILTER (WHERE s <> -1 AND t = -1) FROM {m}"
    )


def kept_edges(m: str, *, drop_loops: bool) -> str:
    loops = " AND s <> t" if drop_loops else ""
    return f"SELECT s, t, row FROM {m} WHERE s <> -1 AND t <> -1{loops}"


def missing_reverses(kept: str) -> str:
    """(t, s, row) for every kept edge whose reverse pair is absent (a loop has its own)."""
    return (
        f"SELECT k.t AS s, k.s AS t, k.row FROM {kept} k "
        f"ANTI JOIN {kept} r ON r.s = k.t AND r.t = k.s"
    )


def resolved(edges: str, policy: str) -> str:
    """Repeated pairs kept, dropped (first row kept) or merged; sorted by (s, t, added, row).

    Within one pair all edges are originals or all are added reverses, so the first in that
    order is the smallest row.
    """
    if policy == "keep":
        return f"SELECT s, t, row FROM {edges} ORDER BY s, t, added, row"
    count = ", count(*) AS multiplicity" if policy == "merge" else ""
    return f"SELECT s, t, min(row) AS row{count} FROM {edges} GROUP BY s, t ORDER BY s, t"


def group_key(schema: pa.Schema) -> str:
    """Every column of an edge table, as grouping expressions with the reference's equality:
    floating-point values compare by their text (so -0.0 and 0.0 differ, NaN equals NaN)."""
    parts = []
    for f in schema:
        name = quote(f.name)
        kind = f.type.value_type if pa.types.is_list(f.type) else f.type
        if pa.types.is_floating(kind):
            cast = f"CAST({name} AS VARCHAR)"
            if pa.types.is_list(f.type):
                cast = f"list_transform({name}, lambda x: CAST(x AS VARCHAR))"
            parts.append(cast)
        else:
            parts.append(name)
    return ", ".join(parts)


def sample(table: str, columns: Sequence[str], k: int) -> str:
    """The ``k`` smallest distinct records, ordered by every column in turn (each column an
    expression, ``... AS name`` allowed)."""
    order = ", ".join(str(i + 1) for i in range(len(columns)))
    return f"SELECT DISTINCT {', '.join(columns)} FROM {table} ORDER BY {order} LIMIT {int(k)}"


def dangling_edges(e: str, sources: str, targets: str) -> str:
    return (
        f"SELECT * FROM (SELECT {ENDS}, "
        f"NOT (source_id IN (SELECT vertex_id FROM {sources})) AS no_source, "
        f"NOT (target_id IN (SELECT vertex_id FROM {targets})) AS no_target FROM {e}) "
        "WHERE no_source OR no_target"
    )


MISSING_SIDE = (
    "CASE WHEN no_source AND no_target THEN 'both' WHEN no_source THEN 'source' "
    "ELSE 'target' END AS missing"
)


def distinct_pairs(e: str) -> str:
    return f"SELECT DISTINCT source_id AS s, target_id AS t FROM {e}"


def reciprocated(pairs: str) -> str:
    return (
        f"SELECT count(*) FROM {pairs} p SEMI JOIN {pairs} r ON r.s = p.t AND r.t = p.s "
        "WHERE p.s <> p.t"
    )


def one_way(e: str, pairs: str) -> str:
    return f"SELECT {ENDS} FROM {e} ANTI JOIN {pairs} r ON r.s = target_id AND r.t = source_id"


def isolated(v: str, id_sources: Sequence[str]) -> str:
    """Distinct vertex IDs that none of the ``id_sources`` (subqueries with column ``id``)
    holds."""
    joins = " ".join(
        f"ANTI JOIN ({source}) x{i} ON x{i}.id = v.vertex_id" for i, source in enumerate(id_sources)
    )
    return f"SELECT DISTINCT v.vertex_id FROM {v} v {joins}"


def id_codes(e: str) -> str:
    """Every endpoint ID of an edge table once, with a code that keeps the byte order."""
    return (
        "SELECT id, row_number() OVER (ORDER BY id) AS code FROM "
        f"(SELECT source_id AS id FROM {e} UNION SELECT target_id FROM {e})"
    )


def coded_edges(e: str, ids: str) -> str:
    """The edge table with both endpoint columns replaced by their codes (same names)."""
    return (
        f"SELECT a.code AS source_id, b.code AS target_id, "
        f"e.* EXCLUDE (source_id, target_id) FROM {e} e "
        f"JOIN {ids} a ON e.source_id = a.id JOIN {ids} b ON e.target_id = b.id"
    )


def decoded(sample_query: str, ids: str, width: int) -> str:
    """A sample's endpoint codes turned back into IDs; the order is kept, since codes order
    as their IDs do."""
    order = ", ".join(str(i + 1) for i in range(width))
    return (
        f"SELECT a.id AS source_id, b.id AS target_id, x.* EXCLUDE (source_id, target_id) "
        f"FROM ({sample_query}) x JOIN {ids} a ON x.source_id = a.code "
        f"JOIN {ids} b ON x.target_id = b.code ORDER BY {order}"
    )
