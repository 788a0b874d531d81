"""Edge structure checks: the engine's check operations (contracts in
``graphmill/engine/_contracts.py``; reference code in ``rules/_structure.py`` and
``rules/_pairs.py``) applied to each relation's edge table, and worded as findings.

Each check takes the context and a subject and returns an :class:`Outcome`. Counts are
over edge rows unless a docstring says otherwise.
"""

from __future__ import annotations

from graphmill.connectors.base import VERTEX_ID
from graphmill.spec import RelationKey
from graphmill.validate._context import CheckContext, Outcome, counted

RECIPROCITY_DEFINITION = (
    "distinct (source, target) pairs whose reverse pair is in the same relation, over all "
    "distinct pairs; repeats count once and self-loops count as pairs that are never "
    "reciprocated, as networkx.overall_reciprocity does on a DiGraph"
)


def check_dangling(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Edges with an endpoint that is not a vertex of the relation's declared type."""
    rel = RelationKey.parse(subject["relation"])
    edges = ctx.edge_input(rel)
    rows = ctx.rows("edges", rel.dotted)
    found = ctx.engine.dangling_edges(
        edges,
        ctx.vertices(rel.source_type).column(VERTEX_ID),
        ctx.vertices(rel.target_type).column(VERTEX_ID),
        ctx.sample_size,
    )
    count, on_source, on_target = (
        found.count,
        found.details["source_side"],
        found.details["target_side"],
    )
    return Outcome(
        count,
        rows,
        f"{count} of {rows} edges of {rel.dotted} have an endpoint that is not a "
        f"declared vertex ({on_source} on the source side, {on_target} on the target side); "
        "add the missing vertices or drop these edges",
        found.sample,
        {"source_side": on_source, "target_side": on_target},
    )


def check_repeated_edge(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Exact repeats: every column equal (count = extra copies)."""
    rel = RelationKey.parse(subject["relation"])
    edges = ctx.edge_input(rel)
    rows = ctx.rows("edges", rel.dotted)
    found = ctx.engine.repeated_edges(edges, ctx.sample_size)
    extra, repeated = found.count, found.details["repeated_edges"]
    return Outcome(
        extra,
        rows,
        f"{extra} of {rows} edges of {rel.dotted} are exact copies of another edge "
        f"({counted(repeated, 'distinct edge')} repeated; edges.duplicates is "
        f"{ctx.spec.edges.duplicates!r})",
        found.sample,
        {"repeated_edges": repeated, "policy": ctx.spec.edges.duplicates},
    )


def check_parallel_edge(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Edges of the same pair that differ in properties (count = distinct rows beyond the
    first per pair; exact repeats are not counted)."""
    rel = RelationKey.parse(subject["relation"])
    edges = ctx.edge_input(rel)
    rows = ctx.rows("edges", rel.dotted)
    found = ctx.engine.parallel_edges(edges, ctx.sample_size)
    extra, pairs = found.count, found.details["pairs"]
    return Outcome(
        extra,
        rows,
        f"{extra} of {rows} edges of {rel.dotted} join a pair that another edge "
        f"with other properties already joins ({counted(pairs, 'pair')})",
        found.sample,
        {"pairs": pairs},
    )


def check_self_loop(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Edges from a vertex to itself (relations whose two sides are one type)."""
    rel = RelationKey.parse(subject["relation"])
    edges = ctx.edge_input(rel)
    rows = ctx.rows("edges", rel.dotted)
    found = ctx.engine.self_loops(edges, ctx.sample_size)
    count = found.count
    return Outcome(
        count,
        rows,
        f"{count} of {rows} edges of {rel.dotted} are self-loops "
        f"(edges.self_loops is {ctx.spec.edges.self_loops!r})",
        found.sample,
        {"policy": ctx.spec.edges.self_loops},
    )


def check_reciprocity(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Reciprocity of a same-type relation (count = reciprocated distinct pairs)."""
    rel = RelationKey.parse(subject["relation"])
    edges = ctx.edge_input(rel)
    rows = ctx.rows("edges", rel.dotted)
    found = ctx.engine.reciprocity(edges)
    back, pairs = found.count, found.details["pairs"]
    value = back / pairs if pairs else None
    text = (
        f"the reciprocity of {rel.dotted} is {value:.4g}: {back} of {pairs} distinct pairs "
        "have their reverse in the relation"
        if value is not None
        else f"{rel.dotted} has no edges, so its reciprocity is undefined"
    )
    details = {
        "reciprocity": value,
        "pairs": pairs,
        "edges": rows,
        "definition": RECIPROCITY_DEFINITION,
    }
    return Outcome(back, pairs, text, details=details, found=True)


def check_one_way_edge(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Edges of an undirected relation whose reverse is missing (a self-loop is its own
    reverse). ``details.pairs`` counts distinct such pairs."""
    rel = RelationKey.parse(subject["relation"])
    edges = ctx.edge_input(rel)
    rows = ctx.rows("edges", rel.dotted)
    found = ctx.engine.one_way_edges(edges, ctx.sample_size)
    count, pairs = found.count, found.details["pairs"]
    policy = ctx.spec.edges.undirected
    then = (
        "the build will add the missing reverses (edges.undirected: symmetrize)"
        if policy == "symmetrize"
        else "edges.undirected is 'as-is', so the bundle would hold them one way only"
    )
    return Outcome(
        count,
        rows,
        f"{count} of {rows} edges of undirected relation {rel.dotted} lack their reverse; {then}",
        found.sample,
        {"pairs": pairs, "policy": policy},
    )
