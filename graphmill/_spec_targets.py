"""Spec cross-checks of what the bundle is built from: features, label and the contract.

Contract: each ``check_*`` takes a schema-valid :class:`~graphmill.spec.PipelineSpec` and
raises :class:`~graphmill.errors.SpecError` (without a file; the caller adds it) naming the
key path, with the index of an item within its own list (``features.person[1]``).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from graphmill._spec_explain import did_you_mean
from graphmill.errors import SpecError, quote_value

if TYPE_CHECKING:
    from graphmill.spec import PipelineSpec, VertexTypeSpec

ALL_KINDS = frozenset({"integer", "float", "boolean", "string", "datetime", "date"})
_NUMBERS = frozenset({"integer", "float", "boolean"})

#: Declared property kinds each encoding can apply to, as ``transform/_encoders.py`` and
#: ``_categorical.py`` treat them: numeric encoders take numbers and booleans (text only as a
#: fallback when no kind is declared), ``boolean`` takes booleans and numbers (non-zero is
#: true), ``datetime`` takes datetimes, dates and ISO 8601 text; vocabulary encoders take any.
#: ``tests/test_spec_encodings.py`` checks this table against the encoders themselves.
ENCODING_KINDS: dict[str, frozenset[str]] = {
    "standardize": _NUMBERS,
    "min-max": _NUMBERS,
    "log": _NUMBERS,
    "identity": _NUMBERS,
    "boolean": frozenset({"boolean", "integer", "float"}),
    "datetime": frozenset({"datetime", "date", "string"}),
    "categories": ALL_KINDS,
    "one-hot": ALL_KINDS,
    "multi-hot": ALL_KINDS,
}
#: The only encoding for a property declared ``multi: true`` (several values per vertex).
MULTI_VALUED_ENCODINGS = frozenset({"multi-hot"})
_VOCABULARY = frozenset({"categories", "one-hot", "multi-hot"})


def _suggest_for_kind(kind: str) -> str:
    fitting = [e for e, kinds in ENCODING_KINDS.items() if kind in kinds]
    return f"for kind {kind!r} use one of: {', '.join(fitting)}"


def check_features(spec: PipelineSpec) -> None:
    """Features name declared types and properties, with an encoding that fits the kind."""
    types = spec.vertex_types
    for vt_name, items in spec.raw.get("features", {}).items():
        if vt_name not in types:
            raise SpecError(
                f"features for undeclared vertex type {quote_value(vt_name)}"
                f"{did_you_mean(vt_name, types)}",
                key_path=f"features.{vt_name}",
            )
        seen: set[tuple[str, str]] = set()
        for i, item in enumerate(items):
            _check_feature(spec, types[vt_name], item, f"features.{vt_name}[{i}]", seen)


def _check_feature(
    spec: PipelineSpec,
    vt: VertexTypeSpec,
    item: dict[str, Any],
    where: str,
    seen: set,
    *,
    owner: str = "vertex type",
    declare_at: str | None = None,
) -> None:
    name, encoding = item["property"], item["encoding"]
    prop = vt.property(name)
    if prop is None:
        declared = [p.name for p in vt.properties]
        raise SpecError(
            f"feature uses property {quote_value(name)}, which {owner} {vt.name!r} does "
            f"not declare{did_you_mean(name, declared)}",
            key_path=f"{where}.property",
            hint="declare it under " + (declare_at or f"vertex_types.{vt.name}.properties"),
        )
    if spec.label is not None and (vt.name, name) == (
        spec.label.vertex_type,
        spec.label.property,
    ):
        raise SpecError(
            f"property {name!r} is the label of {vt.name!r} and cannot also be its feature: "
            "the model would be given the answer (target leakage)",
            key_path=f"{where}.property",
            hint="remove this feature, or predict another property in label.property",
        )
    if prop.multi and encoding not in MULTI_VALUED_ENCODINGS:
        raise SpecError(
            f"encoding {encoding!r} takes one value per vertex, but {name!r} is declared "
            "multi: true",
            key_path=f"{where}.encoding",
            hint="use multi-hot for a property with several values per vertex",
        )
    if prop.kind is not None and prop.kind not in ENCODING_KINDS[encoding]:
        raise SpecError(
            f"encoding {encoding!r} cannot apply to {name!r}, declared kind {prop.kind!r}",
            key_path=f"{where}.encoding",
            hint=_suggest_for_kind(prop.kind),
        )
    for key, fits in (
        ("datetime_parts", encoding == "datetime"),
        ("max_categories", encoding in _VOCABULARY),
    ):
        if key in item and not fits:
            raise SpecError(
                f"{key} has no effect with encoding {encoding!r}",
                key_path=f"{where}.{key}",
                hint=f"remove {key}, or choose an encoding it applies to",
            )
    twice = (name, encoding)
    if twice in seen:
        raise SpecError(
            f"property {name!r} is encoded as {encoding!r} twice in {vt.name!r}",
            key_path=where,
            hint="remove one of the two features",
        )
    seen.add(twice)


def check_label(spec: PipelineSpec) -> None:
    if spec.label is None:
        return
    types = spec.vertex_types
    vt_name, name = spec.label.vertex_type, spec.label.property
    if vt_name not in types:
        raise SpecError(
            f"label on undeclared vertex type {quote_value(vt_name)}{did_you_mean(vt_name, types)}",
            key_path="label.vertex_type",
        )
    declared = [p.name for p in types[vt_name].properties]
    if name not in declared:
        raise SpecError(
            f"label property {quote_value(name)} is not declared for vertex type {vt_name!r}"
            f"{did_you_mean(name, declared)}",
            key_path="label.property",
            hint=f"declare it under vertex_types.{vt_name}.properties",
        )


def check_contract(spec: PipelineSpec) -> None:
    """``checks.expect`` names declared types, relations and properties; ranges are sane."""
    expect = spec.checks.expect
    types = spec.vertex_types
    base = "checks.expect"
    for vt_name, bounds in expect.get("vertex_types", {}).items():
        where = f"{base}.vertex_types.{vt_name}"
        if vt_name not in types:
            raise SpecError(
                f"the contract names undeclared vertex type {quote_value(vt_name)}"
                f"{did_you_mean(vt_name, types)}",
                key_path=where,
            )
        _check_bounds(bounds, where)
    dotted = [r.key.dotted for r in spec.relations]
    for ref, bounds in expect.get("relations", {}).items():
        where = f"{base}.relations.{ref}"
        if ref not in dotted:
            raise SpecError(
                f"the contract names undeclared relation {quote_value(ref)}"
                f"{did_you_mean(ref, dotted)}",
                key_path=where,
                hint="name a relation as 'source_type.name.target_type'",
            )
        _check_bounds(bounds, where)
    for vt_name, names in expect.get("properties", {}).items():
        where = f"{base}.properties.{vt_name}"
        if vt_name not in types:
            raise SpecError(
                f"the contract names undeclared vertex type {quote_value(vt_name)}"
                f"{did_you_mean(vt_name, types)}",
                key_path=where,
            )
        declared = [p.name for p in types[vt_name].properties]
        for i, name in enumerate(names):
            if name not in declared:
                raise SpecError(
                    f"the contract names property {quote_value(name)}, which vertex type "
                    f"{vt_name!r} does not declare{did_you_mean(name, declared)}",
                    key_path=f"{where}[{i}]",
                )


def _check_bounds(bounds: dict[str, Any], where: str) -> None:
    low, high = bounds.get("min"), bounds.get("max")
    if low is not None and high is not None and low > high:
        raise SpecError(
            f"min {low} is above max {high}",
            key_path=f"{where}.min",
            hint="swap them, or fix the one that is wrong",
        )
