"""Property and label checks: the rules of ``rules/_properties.py`` and ``rules/_target.py``
applied to snapshot columns. Subjects name a vertex type or relation and a property."""

from __future__ import annotations

import difflib

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill.errors import GraphmillError
from graphmill.validate._context import CheckContext, Outcome, counted, share, sorted_sample
from graphmill.validate._findings import subject_label
from graphmill.validate.rules import (
    class_sizes,
    element_values,
    kind_mix,
    minority_count,
    non_finite_mask,
    null_mask,
    observed_kinds,
    out_of_range_mask,
    stored_kinds,
    top_kind,
    unexpected_kind_count,
    unlabeled_mask,
)
from graphmill.validate.rules._properties import ILL_TYPED


def where(subject: dict[str, str]) -> tuple[str, str, str]:
    """``(table, name, property)`` of a property subject."""
    if "relation" in subject:
        return "edges", subject["relation"], subject["property"]
    return "vertices", subject["vertex_type"], subject["property"]


def _column(ctx: CheckContext, subject: dict[str, str]) -> pa.ChunkedArray:
    table, name, prop = where(subject)
    data = ctx.table(table, name)
    if prop in data.column_names:
        return data.column(prop)
    return pa.chunked_array([pa.nulls(data.num_rows, pa.string())])


def _listing(kinds: dict[str, int]) -> str:
    return ", ".join(f"{kind} {n}" for kind, n in kinds.items())


def _offenders(
    ctx: CheckContext, subject: dict[str, str], rows: np.ndarray, values: pa.Array | None = None
) -> list[dict[str, object]]:
    """A sorted sample of the offending rows' IDs (and their values, when given)."""
    table, name, _ = where(subject)
    records = ctx.id_records(table, name, pa.array(rows, pa.int64()))
    if values is not None:
        records = records.append_column("value", values)
    return sorted_sample(records, ctx.sample_size)


def _kinds(ctx: CheckContext, subject: dict[str, str]) -> dict[str, int]:
    table, name, prop = where(subject)
    return ctx.value_kinds(table, name).get(prop, {})


def _kind_offenders(
    ctx: CheckContext, subject: dict[str, str], wanted: set[str] | None, *, ill_typed: bool
) -> list[dict[str, object]]:
    """A sample of the rows whose value is not of a ``wanted`` kind (none when ``wanted`` is
    None) and, with ``ill_typed``, of the ill-typed values the snapshot keeps: ``value`` is
    the stored text, or the source's raw text of an ill-typed value. A value's kind is its
    column's one kind, or, in a column that mixes kinds, read from its stored form (see
    :func:`stored_kinds`)."""
    table, name, prop = where(subject)
    values, rows = element_values(_column(ctx, subject))
    single = kind_mix(_kinds(ctx, subject)) in ("none", "single")
    if wanted is None:
        off = pa.array(np.zeros(len(values), dtype=bool))
    else:
        kinds = stored_kinds(values)
        if single:
            only = top_kind(_kinds(ctx, subject)) or "null"
            kinds = pc.if_else(pc.is_valid(values), pa.scalar(only), pa.scalar(None, pa.string()))
        off = pc.invert(pc.is_in(kinds, value_set=pa.array(sorted(wanted))))
        off = pc.fill_null(pc.and_(off, pc.is_valid(kinds)), False)
    hits = np.flatnonzero(off.to_numpy(zero_copy_only=False))
    records = ctx.id_records(table, name, pa.array(rows[hits], pa.int64()))
    records = records.append_column("value", values.filter(off).cast(pa.string()))
    raw = ctx.ill_typed(table, name) if ill_typed else None
    if raw is not None:
        mine = raw.filter(pc.equal(raw.column("property"), prop))
        ill = mine.select(records.column_names[:-1]).append_column("value", mine.column("raw"))
        records = pa.concat_tables([records, ill.cast(records.schema)])
    return sorted_sample(records, ctx.sample_size)


def check_mixed_kinds(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Values of more than one kind in one column (count = values not of the most common
    kind). Integers mixed only with floats are a note (stored as float64, nothing lost
    below 2**53); any other mix is stored as strings and is a violation. The sample holds
    values not of the most common kind, as stored."""
    profile = _kinds(ctx, subject)
    kinds = {k: n for k, n in observed_kinds(profile).items() if k != ILL_TYPED}
    mix = kind_mix(profile)
    count = minority_count(profile) if mix in ("numeric", "mixed") else 0
    label = subject_label(subject)
    stored = str(_column(ctx, subject).type)
    if mix == "numeric":
        text = f"{label} holds integers and floats ({_listing(kinds)}), stored as {stored}"
    else:
        table, name, prop = where(subject)
        declared = ctx.property_spec(table, name, prop)
        advice = (
            f"fix the values that are not {declared.kind}"
            if declared and declared.kind
            else "fix the source values or declare the property's kind"
        )
        text = (
            f"{label} holds values of {len(kinds)} kinds ({_listing(kinds)}), so it is "
            f"stored as {stored}; {advice}"
        )
    details = {"kinds": kinds, "stored_as": stored}
    top = top_kind(profile)
    sample = _kind_offenders(ctx, subject, {top}, ill_typed=False) if count and top else []
    return Outcome(count, sum(kinds.values()), text, sample, details=details, note=mix == "numeric")


def check_unexpected_kind(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Values whose kind differs from the declared ``kind``; ``ill-typed`` values (which
    the source could not read as their datatype) always count."""
    table, name, prop = where(subject)
    declared = ctx.property_spec(table, name, prop)
    kind = declared.kind if declared else None
    kinds = observed_kinds(_kinds(ctx, subject))
    count, total = unexpected_kind_count(kinds, kind), sum(kinds.values())
    wanted = f"of the declared kind {kind}" if kind else "readable as their datatype"
    accepted = ({kind, "integer"} if kind == "float" else {kind}) if kind else None
    if not count:
        sample: list[dict[str, object]] = []
    else:  # with no declared kind, only the ill-typed values are unexpected
        sample = _kind_offenders(ctx, subject, accepted, ill_typed=True)
    return Outcome(
        count,
        total,
        f"{count} of {total} values of {subject_label(subject)} are not {wanted} "
        f"(observed: {_listing(kinds) or 'no values'}); the sample shows them as the "
        "source wrote them",
        sample,
        details={"declared": kind, "kinds": kinds},
    )


def check_absent_property(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """A declared property without any value (not even an ill-typed one) on a non-empty
    table: almost always a misspelt ``from`` key. Suggests the source's closest keys when
    the pull recorded them (``source_keys`` in the snapshot)."""
    table, name, prop = where(subject)
    rows = ctx.table(table, name).num_rows
    values = sum(observed_kinds(_kinds(ctx, subject)).values())
    declared = ctx.property_spec(table, name, prop)
    key = declared.source_key if declared else prop
    keys = ctx.source_keys(table, name)
    details: dict[str, object] = {"from": key, "rows": rows}
    text = f"{subject_label(subject)} has no value on any of its {rows} rows"
    if keys is not None:
        full = _expanded(ctx, key)
        if key in keys or full in keys:
            text += f"; the source has the key {key!r}, without any value of this table"
        else:
            shown = [_compact(ctx, k) for k in _closest(full, keys)]
            details["did_you_mean"] = shown
            text += f"; the source has no key {key!r}" + (
                f" (did you mean {' or '.join(repr(k) for k in shown)}?)"
                if shown
                else f" (it has {len(keys)} others)"
            )
    text += "; check the property's 'from' in the spec"
    return Outcome(int(rows > 0 and values == 0), 1, text, details=details)


def _closest(key: str, keys: list[str]) -> list[str]:
    """Up to three keys most like ``key``, compared by their local names (an IRI's part
    after its last ``/`` or ``#``: RDF predicates share long namespaces)."""
    by_local: dict[str, list[str]] = {}
    for k in keys:
        by_local.setdefault(_local(k), []).append(k)
    close = difflib.get_close_matches(_local(key), list(by_local), n=3, cutoff=0.6)
    return [k for local in close for k in by_local[local]][:3]


def _local(key: str) -> str:
    return key.rstrip("/#").rsplit("/", 1)[-1].rsplit("#", 1)[-1] or key


def _expanded(ctx: CheckContext, key: str) -> str:
    """A spec key as the source names it: RDF prefixed names expanded."""
    if not str(ctx.spec.source.get("kind", "")).startswith(("rdf", "sparql")):
        return key
    try:
        return ctx.spec.rdf.expand(key)
    except GraphmillError:
        return key


def _compact(ctx: CheckContext, key: str) -> str:
    """A source key as a spec would write it: under a declared RDF prefix when one fits."""
    for prefix, namespace in sorted(ctx.spec.rdf.prefixes.items()):
        if key.startswith(namespace) and key != namespace:
            return f"{prefix}:{key[len(namespace) :]}"
    return key


def check_null_rate(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Rows without a value; a finding when their share is above ``max_null_rate``."""
    column = _column(ctx, subject)
    mask = null_mask(column)
    count, rows = int(pc.sum(mask).as_py() or 0), len(column)
    limit = ctx.spec.checks.max_null_rate
    # missing on every row: absent-property's (or, all ill-typed, unexpected-value-kind's)
    over = rows > 0 and count / rows > limit and count < rows
    return Outcome(
        count,
        rows,
        f"{subject_label(subject)} is missing on {count} of {rows} rows "
        f"({share(count, rows)}, above the limit checks.max_null_rate = {limit:g})",
        _offenders(ctx, subject, np.flatnonzero(mask.to_numpy(zero_copy_only=False))),
        {"max_null_rate": limit},
        found=over,
    )


def check_non_finite(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """NaN and infinite values in a floating-point column (count = values)."""
    values, rows = element_values(_column(ctx, subject))
    mask = non_finite_mask(values)
    hits = np.flatnonzero(mask.to_numpy(zero_copy_only=False))
    nan = int(pc.sum(pc.is_nan(values.filter(mask))).as_py() or 0) if len(hits) else 0
    total = len(values) - values.null_count
    return Outcome(
        len(hits),
        total,
        f"{len(hits)} of {total} values of {subject_label(subject)} are not finite "
        f"({nan} NaN, {len(hits) - nan} infinite); replace them or leave the value missing",
        _offenders(ctx, subject, rows[hits], values.filter(mask)),
        {"nan": nan, "infinite": len(hits) - nan},
    )


def check_out_of_range(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Numbers outside the declared ``min``/``max`` (count = values, bounds inclusive)."""
    table, name, prop = where(subject)
    declared = ctx.property_spec(table, name, prop)
    low = declared.minimum if declared else None
    high = declared.maximum if declared else None
    values, rows = element_values(_column(ctx, subject))
    below = out_of_range_mask(values, low, None)
    above = out_of_range_mask(values, None, high)
    mask = pc.or_(below, above)
    hits = np.flatnonzero(mask.to_numpy(zero_copy_only=False))
    n_below = int(pc.sum(below).as_py() or 0)
    total = len(values) - values.null_count
    bounds = f"[{'-inf' if low is None else f'{low:g}'}, {'inf' if high is None else f'{high:g}'}]"
    return Outcome(
        len(hits),
        total,
        f"{len(hits)} of {total} values of {subject_label(subject)} lie outside the declared "
        f"range {bounds} ({n_below} below, {len(hits) - n_below} above)",
        _offenders(ctx, subject, rows[hits], values.filter(mask)),
        {"minimum": low, "maximum": high, "below": n_below, "above": len(hits) - n_below},
    )


def check_unlabeled(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Label-type vertices without a label; always reported, as a violation only when the
    share is above ``max_unlabeled_rate``."""
    mask = unlabeled_mask(_column(ctx, subject))
    count, rows = int(pc.sum(mask).as_py() or 0), len(mask)
    limit = ctx.spec.checks.max_unlabeled_rate
    over = rows > 0 and count / rows > limit
    relation = "above" if over else "within"
    return Outcome(
        count,
        rows,
        f"{count} of {rows} {subject['vertex_type']} vertices ({share(count, rows)}) have no "
        f"{subject['property']} label, {relation} the limit checks.max_unlabeled_rate = "
        f"{limit:g}",
        _offenders(ctx, subject, np.flatnonzero(mask.to_numpy(zero_copy_only=False)))
        if over
        else [],
        {"max_unlabeled_rate": limit, "labeled": rows - count},
        found=True,
        note=not over,
    )


def check_thin_class(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """Label classes with fewer than ``min_class_size`` members (count = such classes)."""
    sizes = class_sizes(_column(ctx, subject))
    minimum = ctx.spec.checks.min_class_size
    thin = sizes.filter(pc.less(sizes.column("members"), minimum))
    members = int(pc.sum(thin.column("members")).as_py() or 0)
    return Outcome(
        thin.num_rows,
        sizes.num_rows,
        f"{thin.num_rows} of {sizes.num_rows} classes of {subject_label(subject)} have fewer "
        f"than {minimum} members ({counted(members, 'vertex', 'vertices')} in all); a stratified "
        "split cannot"
        " place them in every part",
        sorted_sample(thin, ctx.sample_size),
        {"min_class_size": minimum, "vertices_in_thin_classes": members},
    )
