"""SPARQL 1.1 SELECT text for each work unit, shared by the embedded store and endpoints.

Every unit is answered by one SELECT whose variables :func:`unit_variables` names:

* membership: ``?vertex`` (plus ``?clash``, a second declared class, under ``reject``);
* property facet: ``?vertex ?value`` (literal objects only, language filter applied);
* graph facet (``rdf.graph_property``): ``?vertex ?value`` (graph IRI, or ``""`` for the
  default graph);
* relation: ``?source ?target`` (IRI or blank-node objects of subjects of the source type).

The answer is complete and stable as a *set*; no unit relies on ORDER BY (the snapshot sorts).
Graph selection is written into every triple pattern, so no dataset clause or server option
is needed: ``default`` reads the default graph, ``union`` the default graph and every named
graph (each pattern on its own: the graphs are merged), a list those named graphs merged.
IRIs are checked by :mod:`._plan`; string literals are escaped per the SPARQL 1.1 grammar
(``STRING_LITERAL2`` / ``ECHAR``).
"""

from __future__ import annotations

from dataclasses import dataclass

from graphmill.connectors.base import WorkUnit
from graphmill.connectors.rdf._plan import RDF_TYPE, RdfPlan, check_iri, resolve
from graphmill.connectors.rdf._xsd import XSD_STRING
from graphmill.errors import InputError
from graphmill.spec import PipelineSpec

VERTEX, CLASH, VALUE, SOURCE, TARGET = "vertex", "clash", "value", "source", "target"
_ECHAR = {"\\": "\\\\", '"': '\\"', "\n": "\\n", "\r": "\\r", "\t": "\\t", "\b": "\\b", "\f": "\\f"}


@dataclass(frozen=True)
class KeyRange:
    """A slice of a unit by its first variable: IRIs with ``low <= STR(iri) < high`` (either
    bound may be None), or, with ``blank_nodes``, the blank nodes only (STR of a blank node
    is an error in SPARQL, so blank nodes need a slice of their own)."""

    low: str | None = None
    high: str | None = None
    blank_nodes: bool = False


def iri_ref(iri: str) -> str:
    """``<iri>``, after checking that the IRI cannot break out of the brackets."""
    return f"<{check_iri(iri)}>"


def string_literal(text: str) -> str:
    """``"text"`` with ECHAR escapes. ``\\u`` sequences are refused: SPARQL processors may
    decode them before parsing (SPARQL 1.1, section 19.2), which would change the text."""
    if "\\u" in text or "\\U" in text:
        raise InputError(
            f"{text[:60]!r} holds a \\u escape, which SPARQL would decode before parsing",
            hint="pass the character itself",
        )
    return '"' + "".join(_ECHAR.get(c, c) for c in text) + '"'


def unit_variables(spec: PipelineSpec, unit: WorkUnit) -> tuple[str, ...]:
    """The projected variables of :func:`unit_query` for ``unit``, in order."""
    if unit.table == "edges":
        return (SOURCE, TARGET)
    if unit.facet is not None:
        return (VERTEX, VALUE)
    plan = resolve(spec)
    if plan.several_types == "reject" and plan.other_classes(unit.name):
        return (VERTEX, CLASH)
    return (VERTEX,)


class _Writer:
    """Builds one group graph pattern; numbers the graph variables it introduces."""

    def __init__(self, plan: RdfPlan) -> None:
        self.plan = plan
        self.graph_vars = 0

    def triple(self, s: str, p: str, o: str) -> str:
        pattern = f"{s} {p} {o} ."
        if self.plan.graphs == "default":
            return pattern
        self.graph_vars += 1
        g = f"?g{self.graph_vars}"
        if self.plan.graphs == "union":
            return f"{{ {pattern} }} UNION {{ GRAPH {g} {{ {pattern} }} }}"
        named = " ".join(iri_ref(x) for x in self.plan.graphs)
        return f"{{ VALUES {g} {{ {named} }} GRAPH {g} {{ {pattern} }} }}"

    def is_a(self, var: str, cls: str) -> str:
        return self.triple(var, iri_ref(RDF_TYPE), cls)

    def type_rules(self, var: str, vertex_type: str) -> list[str]:
        """Patterns that put ``var`` in ``vertex_type`` under ``rdf.several_types``."""
        own = self.is_a(var, iri_ref(self.plan.classes[vertex_type]))
        return [own, *self.exclusions(var, vertex_type)]

    def exclusions(self, var: str, vertex_type: str) -> list[str]:
        """Under ``first-declared``: not a subject of a type declared earlier."""
        earlier = self.plan.earlier_classes(vertex_type)
        if self.plan.several_types != "first-declared" or not earlier:
            return []
        values = " ".join(iri_ref(c) for c in earlier)
        inner = self.is_a(var, "?earlier")
        return [f"FILTER NOT EXISTS {{ VALUES ?earlier {{ {values} }} {inner} }}"]


def _language_filter(plan: RdfPlan, var: str) -> list[str]:
    if plan.languages is None:
        return []
    tags = [t for t in plan.languages if t]
    untagged = "true" if "" in plan.languages else f"DATATYPE({var}) != {iri_ref(XSD_STRING)}"
    tagged = f"LCASE(LANG({var})) IN ({', '.join(map(string_literal, tags))})" if tags else "false"
    return [f'FILTER((LANG({var}) = "" && {untagged}) || (LANG({var}) != "" && {tagged}))']


def _key_filter(var: str, key_range: KeyRange | None) -> list[str]:
    if key_range is None:
        return []
    if key_range.blank_nodes:
        return [f"FILTER(isBlank({var}))"]
    tests = [f"isIRI({var})"]
    if key_range.low is not None:
        tests.append(f"STR({var}) >= {string_literal(key_range.low)}")
    if key_range.high is not None:
        tests.append(f"STR({var}) < {string_literal(key_range.high)}")
    return [f"FILTER({' && '.join(tests)})"]


def _body(plan: RdfPlan, unit: WorkUnit) -> tuple[list[str], bool]:
    """The WHERE patterns of ``unit`` and whether its rows can repeat without DISTINCT."""
    w = _Writer(plan)
    if unit.table == "edges":
        source_type, predicate = plan.relations[unit.name]
        lines = [w.triple(f"?{SOURCE}", iri_ref(predicate), f"?{TARGET}")]
        lines.append(f"FILTER(!isLiteral(?{TARGET}))")
        return lines + w.type_rules(f"?{SOURCE}", source_type), plan.several_graphs
    cls = iri_ref(plan.classes[unit.name])
    if unit.facet is None:
        lines = w.type_rules(f"?{VERTEX}", unit.name)
        others = plan.other_classes(unit.name)
        if plan.several_types == "reject" and others:
            values = " ".join(iri_ref(c) for c in others)
            inner = w.is_a(f"?{VERTEX}", f"?{CLASH}")
            lines.append(f"OPTIONAL {{ VALUES ?{CLASH} {{ {values} }} {inner} }}")
        return lines, plan.several_graphs
    if unit.facet == plan.graph_property:
        pattern = f"?{VERTEX} {iri_ref(RDF_TYPE)} {cls} ."
        named = f"GRAPH ?{VALUE} {{ {pattern} }}"
        rest = w.exclusions(f"?{VERTEX}", unit.name)
        if plan.graphs == "default":
            return [pattern, f'BIND("" AS ?{VALUE})', *rest], False
        if plan.graphs == "union":
            return [f'{{ {pattern} BIND("" AS ?{VALUE}) }} UNION {{ {named} }}', *rest], False
        graphs = " ".join(iri_ref(g) for g in plan.graphs)
        return [f"VALUES ?{VALUE} {{ {graphs} }}", named, *rest], False
    predicate = iri_ref(plan.predicates[(unit.name, unit.facet)])
    lines = w.type_rules(f"?{VERTEX}", unit.name)
    lines.append(w.triple(f"?{VERTEX}", predicate, f"?{VALUE}"))
    lines.append(f"FILTER(isLiteral(?{VALUE}))")
    return lines + _language_filter(plan, f"?{VALUE}"), plan.several_graphs


def unit_query(
    spec: PipelineSpec,
    unit: WorkUnit,
    *,
    limit: int | None = None,
    offset: int | None = None,
    key_range: KeyRange | None = None,
    distinct: bool | None = None,
    ordered: bool = False,
) -> str:
    """The SELECT answering ``unit`` (see the module doc).

    ``limit``/``offset`` page it (pair them with ``ordered`` for pages that are stable on
    servers that do not promise an order); ``key_range`` slices it by its first variable;
    ``distinct`` forces or drops DISTINCT (default: only where a row can repeat, i.e. when
    several graphs are read -- set it for a server whose default graph is a union).
    """
    plan = resolve(spec)
    lines, repeats = _body(plan, unit)
    names = unit_variables(spec, unit)
    lines += _key_filter(f"?{names[0]}", key_range)
    keyword = "SELECT DISTINCT" if (repeats if distinct is None else distinct) else "SELECT"
    text = f"{keyword} {' '.join('?' + v for v in names)} WHERE {{\n"
    text += "".join(f"  {line}\n" for line in lines) + "}"
    if ordered:
        text += " ORDER BY " + " ".join("?" + v for v in names)
    for word, number in (("LIMIT", limit), ("OFFSET", offset)):
        if number is not None:
            if not isinstance(number, int) or isinstance(number, bool) or number < 0:
                raise InputError(f"{word} must be a whole number >= 0, not {number!r}")
            text += f" {word} {number}"
    return text


def fingerprint_query(spec: PipelineSpec, unit: WorkUnit) -> str:
    """One aggregate row telling whether ``unit``'s answer changed: ``?n`` its row count,
    ``?lo`` and ``?hi`` the smallest and largest IRI of its first variable (a blank node
    counts as ``""``, its label being the server's own)."""
    inner = unit_query(spec, unit).replace("\n", "\n    ")
    first = unit_variables(spec, unit)[0]
    return (  # the outer SELECT names plain variables, as every unit query does
        "SELECT ?n ?lo ?hi WHERE {\n"
        "  { SELECT (COUNT(*) AS ?n) (MIN(?key) AS ?lo) (MAX(?key) AS ?hi) WHERE {\n"
        f"    {{ {inner} }}\n"
        f'    BIND(IF(isIRI(?{first}), STR(?{first}), "") AS ?key)\n  }} }}\n}}'
    )


KEYS_LIMIT = 500


def keys_query(spec: PipelineSpec, vertex_type: str) -> str:
    """The distinct predicates of the subjects of ``vertex_type`` (at most ``KEYS_LIMIT``):
    what a did-you-mean for a property without any value compares against."""
    w = _Writer(resolve(spec))
    lines = [*w.type_rules("?s", vertex_type), w.triple("?s", "?p", "?o")]
    body = "".join(f"  {line}\n" for line in lines)
    return f"SELECT DISTINCT ?p WHERE {{\n{body}}} LIMIT {KEYS_LIMIT}"
