"""Spec cross-check of ``edge_features``: declared relations and properties, fitting encodings.

Contract: for a schema-valid spec, each key of ``edge_features`` is a declared relation
(``source.relation.target``, with a did-you-mean), and each item passes the same checks as a
vertex feature against that relation's declared properties; :class:`SpecError` otherwise.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from graphmill._spec_explain import did_you_mean
from graphmill._spec_targets import _check_feature
from graphmill.errors import SpecError, quote_value

if TYPE_CHECKING:
    from graphmill.spec import PipelineSpec


def check_edge_features(spec: PipelineSpec) -> None:
    """Edge features name declared relations and their properties, with fitting encodings."""
    from graphmill.spec import VertexTypeSpec

    relations = {r.key.dotted: r for r in spec.relations}
    for dotted, items in (spec.raw.get("edge_features") or {}).items():
        rel = relations.get(dotted)
        if rel is None:
            raise SpecError(
                f"edge features for undeclared relation {quote_value(dotted)}"
                f"{did_you_mean(dotted, relations)}",
                key_path=f"edge_features.{dotted}",
                hint="name a relation as source_type.relation.target_type",
            )
        index = [r.key.dotted for r in spec.relations].index(dotted)
        owner = VertexTypeSpec(name=dotted, match=dotted, properties=rel.properties)
        seen: set[tuple[str, str]] = set()
        for i, item in enumerate(items):
            _check_feature(
                spec,
                owner,
                item,
                f"edge_features.{dotted}[{i}]",
                seen,
                owner="relation",
                declare_at=f"relations[{index}].properties",
            )
