"""Edge structure checks: the pure rules of ``rules/_structure.py`` and ``rules/_pairs.py``
applied to each relation's edge table.

Each check takes the context and a subject and returns an :class:`Outcome`. Counts are
over edge rows unless a docstring says otherwise.
"""

from __future__ import annotations

import pyarrow as pa
import pyarrow.compute as pc

from graphmill.connectors.base import SOURCE_ID, TARGET_ID, VERTEX_ID
from graphmill.spec import RelationKey
from graphmill.validate._context import CheckContext, Outcome, counted, sorted_sample
from graphmill.validate.rules import (
    PairCodes,
    dangling_mask,
    distinct_pairs,
    distinct_rows,
    exact_repeats,
    parallel_variants,
    reciprocated_mask,
    reciprocity_counts,
    self_loop_mask,
)

ENDPOINTS = [SOURCE_ID, TARGET_ID]
RECIPROCITY_DEFINITION = (
    "distinct (source, target) pairs whose reverse pair is in the same relation, over all "
    "distinct pairs; repeats count once and self-loops count as pairs that are never "
    "reciprocated, as networkx.overall_reciprocity does on a DiGraph"
)


def _sum(mask: pa.Array) -> int:
    return int(pc.sum(mask).as_py() or 0)


def _codes(ctx: CheckContext, rel: RelationKey) -> PairCodes:
    return ctx.pair_codes(rel)


def _distinct(ctx: CheckContext, rel: RelationKey) -> pa.Table:
    return ctx.memo(
        ("distinct", rel.dotted), lambda: distinct_rows(ctx.edges(rel), codes=_codes(ctx, rel))
    )


def check_dangling(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Edges with an endpoint that is not a vertex of the relation's declared type."""
    rel = RelationKey.parse(subject["relation"])
    edges = ctx.edges(rel)
    codes = _codes(ctx, rel)
    src = dangling_mask(
        edges.column(SOURCE_ID),
        ctx.vertices(rel.source_type).column(VERTEX_ID),
        coded=(codes, "source"),
    )
    dst = dangling_mask(
        edges.column(TARGET_ID),
        ctx.vertices(rel.target_type).column(VERTEX_ID),
        coded=(codes, "target"),
    )
    either = pc.or_(src, dst)
    records = edges.select(ENDPOINTS).filter(either)
    src, dst = src.filter(either), dst.filter(either)
    count, on_source, on_target = _sum(either), _sum(src), _sum(dst)
    missing = pc.if_else(pc.and_(src, dst), "both", pc.if_else(src, "source", "target"))
    records = records.append_column("missing", missing)
    return Outcome(
        count,
        edges.num_rows,
        f"{count} of {edges.num_rows} edges of {rel.dotted} have an endpoint that is not a "
        f"declared vertex ({on_source} on the source side, {on_target} on the target side); "
        "add the missing vertices or drop these edges",
        sorted_sample(records, ctx.sample_size),
        {"source_side": on_source, "target_side": on_target},
    )


def check_repeated_edge(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Exact repeats: every column equal (count = extra copies)."""
    rel = RelationKey.parse(subject["relation"])
    edges = ctx.edges(rel)
    repeats = exact_repeats(edges, codes=_codes(ctx, rel), distinct=_distinct(ctx, rel))
    extra = _sum(repeats.column("copies")) - repeats.num_rows
    return Outcome(
        extra,
        edges.num_rows,
        f"{extra} of {edges.num_rows} edges of {rel.dotted} are exact copies of another edge "
        f"({counted(repeats.num_rows, 'distinct edge')} repeated; edges.duplicates is "
        f"{ctx.spec.edges.duplicates!r})",
        sorted_sample(repeats, ctx.sample_size),
        {"repeated_edges": repeats.num_rows, "policy": ctx.spec.edges.duplicates},
    )


def check_parallel_edge(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Edges of the same pair that differ in properties (count = distinct rows beyond the
    first per pair; exact repeats are not counted)."""
    rel = RelationKey.parse(subject["relation"])
    edges = ctx.edges(rel)
    variants = parallel_variants(edges, codes=_codes(ctx, rel), distinct=_distinct(ctx, rel))
    extra = _sum(variants.column("variants")) - variants.num_rows
    return Outcome(
        extra,
        edges.num_rows,
        f"{extra} of {edges.num_rows} edges of {rel.dotted} join a pair that another edge "
        f"with other properties already joins ({counted(variants.num_rows, 'pair')})",
        sorted_sample(variants, ctx.sample_size),
        {"pairs": variants.num_rows},
    )


def check_self_loop(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Edges from a vertex to itself (relations whose two sides are one type)."""
    rel = RelationKey.parse(subject["relation"])
    edges = ctx.edges(rel)
    mask = self_loop_mask(edges.column(SOURCE_ID), edges.column(TARGET_ID))
    count = _sum(mask)
    return Outcome(
        count,
        edges.num_rows,
        f"{count} of {edges.num_rows} edges of {rel.dotted} are self-loops "
        f"(edges.self_loops is {ctx.spec.edges.self_loops!r})",
        sorted_sample(edges.select(ENDPOINTS).filter(mask), ctx.sample_size),
        {"policy": ctx.spec.edges.self_loops},
    )


def check_reciprocity(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Reciprocity of a same-type relation (count = reciprocated distinct pairs)."""
    rel = RelationKey.parse(subject["relation"])
    edges = ctx.edges(rel)
    back, pairs = reciprocity_counts(
        edges.column(SOURCE_ID), edges.column(TARGET_ID), codes=_codes(ctx, rel)
    )
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
        "edges": edges.num_rows,
        "definition": RECIPROCITY_DEFINITION,
    }
    return Outcome(back, pairs, text, details=details, found=True)


def check_one_way_edge(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Edges of an undirected relation whose reverse is missing (a self-loop is its own
    reverse). ``details.pairs`` counts distinct such pairs."""
    rel = RelationKey.parse(subject["relation"])
    edges = ctx.edges(rel)
    back = reciprocated_mask(
        edges.column(SOURCE_ID), edges.column(TARGET_ID), codes=_codes(ctx, rel)
    )
    mask = pc.invert(back)
    count = _sum(mask)
    one_way = edges.select(ENDPOINTS).filter(mask)
    codes = _codes(ctx, rel)
    where = mask.to_numpy(zero_copy_only=False)
    subset = codes.subset(where)
    pairs = distinct_pairs(one_way.column(SOURCE_ID), one_way.column(TARGET_ID), codes=subset)
    policy = ctx.spec.edges.undirected
    then = (
        "the build will add the missing reverses (edges.undirected: symmetrize)"
        if policy == "symmetrize"
        else "edges.undirected is 'as-is', so the bundle would hold them one way only"
    )
    return Outcome(
        count,
        edges.num_rows,
        f"{count} of {edges.num_rows} edges of undirected relation {rel.dotted} lack their "
        f"reverse; {then}",
        sorted_sample(one_way, ctx.sample_size),
        {"pairs": pairs, "policy": policy},
    )
