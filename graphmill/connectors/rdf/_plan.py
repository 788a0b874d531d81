"""A spec resolved for RDF: the checked IRIs of every class, predicate and graph, and the units.

Every IRI a query will carry is expanded with ``rdf.prefixes`` and checked against the SPARQL
1.1 ``IRIREF`` production (no space, ``<>"{}|^`\\`` or control characters) and for a scheme,
so a spec string can never change the text of a query; a refusal is a
:class:`~graphmill.errors.SpecError` naming the spec key.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from graphmill.connectors.base import WorkUnit
from graphmill.connectors.rdf._xsd import RDF
from graphmill.errors import SpecError
from graphmill.spec import PipelineSpec

RDF_TYPE = RDF + "type"
_FORBIDDEN = re.compile(r'[\x00-\x20<>"{}|^`\\\x7f]')
_SCHEME = re.compile(r"^[A-Za-z][A-Za-z0-9+.-]*:")


def check_iri(iri: str, *, key_path: str | None = None) -> str:
    """Return ``iri`` if it can be written as ``<iri>`` in SPARQL; else raise SpecError."""
    bad = _FORBIDDEN.search(iri)
    if bad:
        raise SpecError(
            f"{iri!r} is not an IRI: the character {bad.group()!r} is not allowed in one",
            key_path=key_path,
            hint="percent-encode it or correct the IRI",
        )
    if not _SCHEME.match(iri):
        raise SpecError(
            f"{iri!r} is not an absolute IRI (no scheme)",
            key_path=key_path,
            hint="write the full IRI or use a declared prefix",
        )
    return iri


@dataclass(frozen=True)
class RdfPlan:
    """The spec's RDF side, resolved: vertex types in declared order with their class IRIs."""

    type_names: tuple[str, ...]
    classes: dict[str, str]
    predicates: dict[tuple[str, str], str]  # (vertex type, property) -> predicate IRI
    relations: dict[str, tuple[str, str]]  # dotted relation -> (source type, predicate IRI)
    graphs: str | tuple[str, ...]  # "default", "union" or named graph IRIs
    several_types: str
    languages: tuple[str, ...] | None  # lower case; "" keeps untagged strings
    graph_property: str | None
    kinds: dict[tuple[str, str], str | None] = field(default_factory=dict)  # declared kinds

    def earlier_classes(self, vertex_type: str) -> tuple[str, ...]:
        """Classes of the vertex types declared before ``vertex_type`` (first-declared)."""
        index = self.type_names.index(vertex_type)
        return tuple(dict.fromkeys(self.classes[t] for t in self.type_names[:index]))

    def other_classes(self, vertex_type: str) -> tuple[str, ...]:
        """Classes of every other vertex type (reject); may include its own class."""
        return tuple(dict.fromkeys(self.classes[t] for t in self.type_names if t != vertex_type))

    @property
    def several_graphs(self) -> bool:
        """Whether a triple can be seen twice (in two graphs), so results need DISTINCT."""
        return self.graphs == "union" or (isinstance(self.graphs, tuple) and len(self.graphs) > 1)


def resolve(spec: PipelineSpec) -> RdfPlan:
    """Expand and check every IRI of ``spec``; refuse what RDF sources cannot honour."""
    rdf = spec.rdf

    def iri(term: str, key_path: str) -> str:
        try:
            return check_iri(rdf.expand(term), key_path=key_path)
        except SpecError as exc:
            raise SpecError(exc.message, key_path=key_path, hint=exc.hint) from exc

    classes: dict[str, str] = {}
    predicates: dict[tuple[str, str], str] = {}
    kinds: dict[tuple[str, str], str | None] = {}
    for name, vt in spec.vertex_types.items():
        classes[name] = iri(vt.match, f"vertex_types.{name}.match")
        for prop in vt.properties:
            if prop.name == rdf.graph_property:
                raise SpecError(
                    f"rdf.graph_property {prop.name!r} is also a property of vertex type {name!r}",
                    key_path="rdf.graph_property",
                    hint="choose another name for one of them",
                )
            key = f"vertex_types.{name}.properties.{prop.name}.from"
            predicates[(name, prop.name)] = iri(prop.source_key, key)
            kinds[(name, prop.name)] = prop.kind
    relations: dict[str, tuple[str, str]] = {}
    for i, rel in enumerate(spec.relations):
        if rel.properties:
            raise SpecError(
                "RDF relations carry no edge properties (an edge is one triple)",
                key_path=f"relations[{i}].properties",
                hint="remove the properties, or model them as a vertex type",
            )
        relations[rel.key.dotted] = (rel.key.source_type, iri(rel.match, f"relations[{i}].match"))
    graphs: str | tuple[str, ...] = rdf.graphs
    if not isinstance(graphs, str):
        graphs = tuple(iri(g, f"rdf.graphs[{i}]") for i, g in enumerate(graphs))
    languages = None
    if rdf.languages is not None:
        languages = tuple(dict.fromkeys(tag.lower() for tag in rdf.languages))
    return RdfPlan(
        type_names=tuple(spec.vertex_types),
        classes=classes,
        predicates=predicates,
        relations=relations,
        graphs=graphs,
        several_types=rdf.several_types,
        languages=languages,
        graph_property=rdf.graph_property,
        kinds=kinds,
    )


def plan_units(spec: PipelineSpec) -> list[WorkUnit]:
    """Per vertex type a membership unit and a facet per property (and graph property);
    per relation one unit -- the property facets of :mod:`graphmill.connectors.base`."""
    resolve(spec)
    units: list[WorkUnit] = []
    for name, vt in spec.vertex_types.items():
        units.append(WorkUnit("vertices", name))
        facets = [p.name for p in vt.properties]
        if spec.rdf.graph_property:
            facets.append(spec.rdf.graph_property)
        units += [WorkUnit("vertices", name, facet=f) for f in facets]
    units += [WorkUnit("edges", rel.key.dotted) for rel in spec.relations]
    return units
