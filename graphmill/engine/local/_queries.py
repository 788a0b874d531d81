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


def literal(text: str) -> str:
    """An SQL string literal."""
    return "'" + text.replace("'", "''") + "'"


def sorted_parts(
    paths: Sequence[str], columns: Sequence[str], keys: Sequence[str], *, ties: bool
) -> str:
    """``canonical-merge``: ``columns`` of the Parquet files at ``paths`` by ``keys``; with
    ``ties``, rows whose keys compare equal keep the files' order, then row order (needed
    only where equal keys can hold different values, e.g. -0.0 and 0.0)."""
    listed = "[" + ", ".join(literal(p) for p in paths) + "]"
    order = ", ".join(f"{quote(k)} ASC NULLS LAST" for k in keys)
    options = ""
    if ties:
        options = ", filename = true, file_row_number = true"
        in_order = list(paths) == sorted(paths)  # then the name is the file's rank
        rank = "filename" if in_order else f"list_position({listed}, filename)"
        order += f", {rank}, file_row_number"
    return (
        f"SELECT {', '.join(quote(c) for c in columns)} FROM read_parquet({listed}, "
        f"union_by_name = true{options}) ORDER BY {order}"
    )


SQL_TYPES = {
    pa.string(): "VARCHAR",
    pa.int64(): "BIGINT",
    pa.float64(): "DOUBLE",
    pa.bool_(): "BOOLEAN",
    pa.date32(): "DATE",
}


def scanned(
    path: str,
    fields: Sequence[tuple[str, str, str]],
    blank: Sequence[str],
    where: tuple[str, str] | None,
    rank: int,
    *,
    ties: bool,
) -> str:
    """One input file's rows as a snapshot table's (a ``FileScan``): ``fields`` are
    (snapshot column, file column, SQL type); ``blank`` columns hold null for empty text;
    ``where`` = (column, value) keeps rows whose column reads as that text. With ``ties``,
    ``gm_rank`` (the scan's place) and ``gm_row`` (the row's place in the file) come too."""
    columns = []
    for name, source, sql_type in fields:
        value = f"CAST({quote(source)} AS {sql_type})"
        if name in blank:
            value = f"nullif({value}, '')"
        columns.append(f"{value} AS {quote(name)}")
    if ties:
        columns += [f"{rank} AS gm_rank", "file_row_number AS gm_row"]
    option = ", file_row_number = true" if ties else ""
    query = f"SELECT {', '.join(columns)} FROM read_parquet({literal(path)}{option})"
    if where is not None:
        query += f" WHERE CAST({quote(where[0])} AS VARCHAR) = {literal(where[1])}"
    return query


def sorted_scans(scans: Sequence[str], columns: Sequence[str], *, ties: bool) -> str:
    """``canonical-merge`` over input files: the union of ``scans`` (:func:`scanned`) in
    canonical order by ``columns``; with ``ties``, equal keys keep scan, then row order."""
    order = ", ".join(f"{quote(k)} ASC NULLS LAST" for k in columns)
    if ties:
        order += ", gm_rank, gm_row"
    union = " UNION ALL ".join(f"({s})" for s in scans)
    return f"SELECT {', '.join(quote(c) for c in columns)} FROM ({union}) ORDER BY {order}"


def first_rows(table: str) -> str:
    """``vertex-index``: first row per ID, in ID order."""
    return f"SELECT min(row) AS row FROM {table} GROUP BY id ORDER BY id"


def endpoint_positions(endpoints: str, vertices: str) -> str:
    """``endpoint-index``: (row, position) of each endpoint that is a vertex; ``endpoints``
    has columns ``id`` and ``row``."""
    return f"SELECT e.row, v.position FROM {endpoints} e JOIN {vertices} v ON e.id = v.id"


def mapped(e: str, row: str, sources: str, targets: str) -> str:
    """``mapped-edges``: (s, t, row) of every edge, -1 for an endpoint that is no vertex."""
    return (
        f"SELECT coalesce(a.position, -1) AS s, coalesce(b.position, -1) AS t, e.{row} AS row "
        f"FROM {e} e LEFT JOIN {sources} a ON e.source_id = a.id "
        f"LEFT JOIN {targets} b ON e.target_id = b.id"
    )


def dangling_counts(m: str) -> str:
    return (
        f"SELECT count(*), count(*) FILTER (WHERE s = -1 AND t = -1), "
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


def resolved_rows(edges: str, policy: str) -> str:
    """:func:`resolved` without its order, to be kept in the session and read in order by
    :func:`in_order` (``keep`` keeps the ``added`` flag that order needs)."""
    if policy == "keep":
        return f"SELECT s, t, row, added FROM {edges}"
    count = ", count(*) AS multiplicity" if policy == "merge" else ""
    return f"SELECT s, t, min(row) AS row{count} FROM {edges} GROUP BY s, t"


def in_order(resolved_table: str, policy: str, *, reverse: bool = False) -> str:
    """The rows of :func:`resolved_rows` in :func:`resolved`'s order; ``reverse``: endpoints
    swapped, then sorted by the swapped pair, ties in the same order as before."""
    ends = "t AS s, s AS t" if reverse else "s, t"
    if policy == "keep":
        return f"SELECT {ends}, row, added FROM {resolved_table} ORDER BY 1, 2, 4, 3"
    extra = ", multiplicity" if policy == "merge" else ""
    return f"SELECT {ends}, row{extra} FROM {resolved_table} ORDER BY 1, 2"


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


MISSING_SIDE = (
    "CASE WHEN no_source AND no_target THEN 'both' WHEN no_source THEN 'source' "
    "ELSE 'target' END AS missing"
)


def distinct_pairs(e: str) -> str:
    """Distinct (s, t) endpoint pairs (the per-rule form the Spark engine runs)."""
    return f"SELECT DISTINCT source_id AS s, target_id AS t FROM {e}"


def reciprocated(pairs: str) -> str:
    """Count of distinct non-loop pairs whose reverse pair is present."""
    return (
        f"SELECT count(*) FROM {pairs} p SEMI JOIN {pairs} r ON r.s = p.t AND r.t = p.s "
        "WHERE p.s <> p.t"
    )


def one_way(e: str, pairs: str) -> str:
    """Edge rows whose reverse pair is absent from ``pairs``."""
    return f"SELECT {ENDS} FROM {e} ANTI JOIN {pairs} r ON r.s = target_id AND r.t = source_id"


def isolated(v: str, id_sources: Sequence[str]) -> str:
    """Distinct vertex IDs that none of the ``id_sources`` (subqueries with column ``id``)
    holds."""
    joins = " ".join(
        f"ANTI JOIN ({source}) x{i} ON x{i}.id = v.vertex_id" for i, source in enumerate(id_sources)
    )
    return f"SELECT DISTINCT v.vertex_id FROM {v} v {joins}"


def id_codes(e: str) -> str:
    """Every endpoint ID of an edge table once, with a code that keeps the byte order and
    whether it stands as a source, as a target (for isolated vertices)."""
    return (
        "SELECT id, row_number() OVER (ORDER BY id) AS code, as_source, as_target FROM "
        "(SELECT id, bool_or(side = 0) AS as_source, bool_or(side = 1) AS as_target FROM "
        f"(SELECT source_id AS id, 0 AS side FROM {e} UNION ALL SELECT target_id, 1 FROM {e}) "
        "GROUP BY id)"
    )


def coded_edges(e: str, ids: str) -> str:
    """The edge table with both endpoint columns replaced by their codes (same names)."""
    return (
        f"SELECT a.code AS source_id, b.code AS target_id, "
        f"e.* EXCLUDE (source_id, target_id) FROM {e} e "
        f"JOIN {ids} a ON e.source_id = a.id JOIN {ids} b ON e.target_id = b.id"
    )


def coded_pairs(e: str, ids: str) -> str:
    """The distinct coded (source_id, target_id) pairs of a raw edge table, with ``copies``
    (edges per pair)."""
    return (
        f"SELECT a.code AS source_id, b.code AS target_id, count(*) AS copies FROM {e} e "
        f"JOIN {ids} a ON e.source_id = a.id JOIN {ids} b ON e.target_id = b.id "
        "GROUP BY a.code, b.code"
    )


def pair_flags(pairs: str) -> str:
    """The pairs with ``back``: whether the reverse pair is present too (a loop is its own
    reverse)."""
    return (
        f"SELECT p.source_id, p.target_id, p.copies, r.source_id IS NOT NULL AS back "
        f"FROM {pairs} p LEFT JOIN {pairs} r "
        "ON r.source_id = p.target_id AND r.target_id = p.source_id"
    )


def missing_codes(ids: str, vertices: str, side: str) -> str:
    """Codes of the IDs on ``side`` that are not among ``vertices`` (column ``vertex_id``)."""
    return (
        f"SELECT code FROM {ids} i ANTI JOIN {vertices} v ON i.id = v.vertex_id WHERE i.as_{side}"
    )


def dangling_pairs(pairs: str, no_source: str, no_target: str) -> str:
    """Pairs with an endpoint among the missing codes, flagged by side."""
    return (
        f"SELECT * FROM (SELECT source_id, target_id, copies, "
        f"source_id IN (SELECT code FROM {no_source}) AS no_source, "
        f"target_id IN (SELECT code FROM {no_target}) AS no_target FROM {pairs}) "
        "WHERE no_source OR no_target"
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


def repeated_ids(v: str) -> str:
    """``duplicate-vertex-ids``: IDs of ``v`` (column ``vertex_id``) in several rows, with
    ``copies``."""
    return f"SELECT vertex_id, count(*) AS copies FROM {v} GROUP BY vertex_id HAVING count(*) > 1"


def ids_of_types(vs: Sequence[str]) -> str:
    """Each distinct ``vertex_id`` of each table in ``vs`` once per table."""
    return " UNION ALL ".join(f"SELECT DISTINCT vertex_id FROM {v}" for v in vs)


def shared_ids(vs: Sequence[str]) -> str:
    """``shared-vertex-ids``: IDs held by more than one of the tables ``vs``."""
    return f"SELECT vertex_id FROM ({ids_of_types(vs)}) x GROUP BY vertex_id HAVING count(*) > 1"


def distinct_ids(vs: Sequence[str]) -> str:
    """The number of distinct IDs over the tables ``vs``."""
    return f"SELECT count(DISTINCT vertex_id) FROM ({ids_of_types(vs)}) x"
