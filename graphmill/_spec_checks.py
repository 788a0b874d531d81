"""Cross-checks of a spec that its schema cannot express, run once at load for every command.

Contract: :func:`cross_check` runs every function in :data:`CHECKS` on a schema-valid
:class:`~graphmill.spec.PipelineSpec`; the first problem is raised as a
:class:`~graphmill.errors.SpecError` with the spec file and the key path of the offending
value. A check for a new key is one more function appended to :data:`CHECKS` (features,
label and contract checks live in :mod:`graphmill._spec_targets`). Names that refer to
declared things get a did-you-mean.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import TYPE_CHECKING, Any

from graphmill._spec_edge_features import check_edge_features
from graphmill._spec_explain import did_you_mean, key_path, listed
from graphmill._spec_targets import check_contract, check_features, check_label
from graphmill._spec_tasks import check_task
from graphmill.errors import SpecError, quote_value

if TYPE_CHECKING:
    from graphmill.spec import PipelineSpec, PropertySpec

#: Declared kinds whose values are numbers, so that ``min``/``max`` can apply to them.
NUMERIC_KINDS = frozenset({"integer", "float"})
RDF_KINDS = ("rdf-file", "rdf-store", "sparql-endpoint")


def refuse_nan(document: Any, where: str | None) -> None:
    """Refuse a NaN anywhere in the parsed spec (YAML ``.nan``): no key can use it."""
    stack: list[tuple[Any, tuple[Any, ...]]] = [(document, ())]
    seen: set[int] = set()
    while stack:
        node, path = stack.pop()
        if isinstance(node, float) and math.isnan(node):
            raise SpecError(
                "NaN is not a usable number here",
                file=where,
                key_path=key_path(path),
                hint="give a number",
            )
        if isinstance(node, dict | list) and id(node) not in seen:
            seen.add(id(node))  # a YAML alias is walked once
            items = node.items() if isinstance(node, dict) else enumerate(node)
            stack.extend((value, (*path, key)) for key, value in items)


def check_source_kind(spec: PipelineSpec) -> None:
    from graphmill.connectors import available_kinds

    kinds = available_kinds()
    if spec.source_kind not in kinds:
        raise SpecError(
            f"unknown source kind {quote_value(spec.source_kind)}"
            f"{did_you_mean(spec.source_kind, kinds)}",
            key_path="source.kind",
            hint=f"use one of: {', '.join(kinds)}",
        )


def check_table_files(spec: PipelineSpec) -> None:
    """``type`` and ``relation`` of each table file name declared things."""
    if spec.source_kind != "table-files":
        return
    for i, entry in enumerate(spec.source.get("vertex_files", [])):
        name = entry.get("type")
        if name is not None and name not in spec.vertex_types:
            raise SpecError(
                f"vertex type {quote_value(name)} is not declared under vertex_types"
                f"{did_you_mean(name, spec.vertex_types)}",
                key_path=f"source.vertex_files[{i}].type",
            )
    names = [r.key.name for r in spec.relations]
    dotted = [r.key.dotted for r in spec.relations]
    for i, entry in enumerate(spec.source.get("edge_files", [])):
        ref = entry.get("relation")
        if ref is None:
            continue
        found = [r for r in spec.relations if ref in (r.key.name, r.key.dotted)]
        if not found:
            raise SpecError(
                f"no relation named {quote_value(ref)}"
                f"{did_you_mean(ref, dotted if '.' in ref else names)}",
                key_path=f"source.edge_files[{i}].relation",
                hint="declare it under relations, or name one declared there",
            )
        if len(found) > 1:
            raise SpecError(
                f"several relations named {quote_value(ref)}: "
                + ", ".join(r.key.dotted for r in found),
                key_path=f"source.edge_files[{i}].relation",
                hint="use the dotted form 'source_type.name.target_type'",
            )


def check_table_columns(spec: PipelineSpec) -> None:
    """With ``type_column`` / ``relation_column``, rows are told apart by ``match`` values,
    so no two vertex types (relations) may share one."""
    if spec.source_kind != "table-files":
        return
    for files, column, things in (
        (
            "vertex_files",
            "type_column",
            [(f"vertex_types.{n}", t.match) for n, t in spec.vertex_types.items()],
        ),
        (
            "edge_files",
            "relation_column",
            [(f"relations[{i}]", r.match) for i, r in enumerate(spec.relations)],
        ),
    ):
        users = [i for i, e in enumerate(spec.source.get(files, [])) if column in e]
        if not users:
            continue
        first: dict[str, str] = {}
        for where, match in things:
            if match in first:
                raise SpecError(
                    f"{first[match]} and {where} both match {quote_value(match)}, so "
                    f"source.{files}[{users[0]}].{column} cannot tell their rows apart",
                    key_path=f"{where}.match",
                    hint="give each a distinct 'match', or use one file per type with 'type'"
                    if column == "type_column"
                    else "give each a distinct 'match', or one file per relation with 'relation'",
                )
            first[match] = where


def check_relations(spec: PipelineSpec) -> None:
    """Relations join declared vertex types, each (from, name, to) once."""
    seen: set[Any] = set()
    for i, rel in enumerate(spec.relations):
        for side, name in (("from", rel.key.source_type), ("to", rel.key.target_type)):
            if name not in spec.vertex_types:
                raise SpecError(
                    f"relation refers to undeclared vertex type {quote_value(name)}"
                    f"{did_you_mean(name, spec.vertex_types)}",
                    key_path=f"relations[{i}].{side}",
                )
        if rel.key in seen:
            raise SpecError(
                f"relation {rel.key.dotted} is declared twice", key_path=f"relations[{i}]"
            )
        seen.add(rel.key)


def check_property_ranges(spec: PipelineSpec) -> None:
    """``min`` at most ``max``, and both only on numeric kinds."""
    for name, vt in spec.vertex_types.items():
        for prop in vt.properties:
            _check_range(prop, f"vertex_types.{name}.properties.{prop.name}")
    for i, rel in enumerate(spec.relations):
        for prop in rel.properties:
            _check_range(prop, f"relations[{i}].properties.{prop.name}")


def _check_range(prop: PropertySpec, where: str) -> None:
    low, high = prop.minimum, prop.maximum
    if low is not None and high is not None and low > high:
        raise SpecError(
            f"min {low:g} is above max {high:g}",
            key_path=f"{where}.min",
            hint="swap them, or fix the one that is wrong",
        )
    if (low is not None or high is not None) and prop.kind not in (None, *NUMERIC_KINDS):
        raise SpecError(
            f"min and max apply to numbers, but the property's kind is {prop.kind!r}",
            key_path=f"{where}.{'min' if low is not None else 'max'}",
            hint="remove min/max, or declare kind integer or float",
        )


def check_split(spec: PipelineSpec) -> None:
    parts = (spec.split.train, spec.split.validation, spec.split.test)
    total = sum(parts)
    if abs(total - 1.0) > 1e-9:
        raise SpecError(f"split fractions add up to {total:g}, not 1", key_path="split.fractions")
    if spec.split.method == "stratified" and spec.label is None and "split" in spec.raw:
        raise SpecError(
            "a stratified split needs a label",
            key_path="split.method",
            hint="declare label, or use method: random",
        )


def check_severities(spec: PipelineSpec) -> None:
    """Every rule id under ``checks.severity`` is a rule of the catalogue."""
    from graphmill.transform._leakage import LEAKAGE_RULES
    from graphmill.validate._findings import RULES as CHECK_RULES

    rules = {**CHECK_RULES, **LEAKAGE_RULES}  # the build's leakage audit obeys them too
    for rule_id in spec.checks.severity:
        if rule_id not in rules:
            guess = did_you_mean(rule_id, rules)
            raise SpecError(
                f"unknown rule id {quote_value(rule_id)}{guess}",
                key_path=f"checks.severity.{rule_id}",
                hint=None
                if guess
                else f"rule ids (all in the README's Checks table): {listed(rules, limit=200)}",
            )


def check_rdf_terms(spec: PipelineSpec) -> None:
    """For RDF sources: every class and predicate expands; what RDF cannot hold is refused."""
    if spec.source_kind not in RDF_KINDS:
        return
    terms = []
    for name, vt in spec.vertex_types.items():
        terms.append((vt.match, f"vertex_types.{name}.match"))
        for prop in vt.properties:
            terms.append((prop.source_key, f"vertex_types.{name}.properties.{prop.name}.from"))
            if prop.name == spec.rdf.graph_property:
                raise SpecError(
                    f"rdf.graph_property {prop.name!r} is also a property of vertex type {name!r}",
                    key_path="rdf.graph_property",
                    hint="choose another name for one of them",
                )
    for i, rel in enumerate(spec.relations):
        terms.append((rel.match, f"relations[{i}].match"))
        if rel.properties:
            raise SpecError(
                "RDF relations carry no edge properties (an edge is one triple)",
                key_path=f"relations[{i}].properties",
                hint="remove the properties, or model them as a vertex type",
            )
    for term, where in terms:
        try:
            spec.rdf.expand(term)
        except SpecError as exc:
            raise SpecError(exc.message, key_path=where, hint=exc.hint) from None


def check_edges(spec: PipelineSpec) -> None:
    """``edges.add_reverse`` must not add a relation the spec already declares."""
    if not spec.edges.add_reverse:
        return
    declared = {r.key for r in spec.relations}
    for rel in spec.relations:
        if rel.undirected:
            continue
        reverse = type(rel.key)(rel.key.target_type, f"rev_{rel.key.name}", rel.key.source_type)
        if reverse in declared:
            raise SpecError(
                f"edges.add_reverse would add {reverse.dotted}, which the spec already declares",
                key_path="edges.add_reverse",
                hint="rename that relation or set add_reverse: false",
            )


#: Every cross-check, in the order they run.
CHECKS: tuple[Callable[[PipelineSpec], None], ...] = (
    check_source_kind,
    check_relations,
    check_table_files,
    check_table_columns,
    check_property_ranges,
    check_features,
    check_edge_features,
    check_label,
    check_task,
    check_split,
    check_severities,
    check_contract,
    check_rdf_terms,
    check_edges,
)


def cross_check(spec: PipelineSpec, where: str | None) -> None:
    """Run :data:`CHECKS`; the first problem is raised with ``where`` as its file."""
    for check in CHECKS:
        try:
            check(spec)
        except SpecError as exc:
            if exc.file is None:
                exc.file = where
            raise
