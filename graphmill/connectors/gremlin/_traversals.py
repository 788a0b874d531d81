"""The traversals a gremlin source sends, built as bytecode from parameters.

Labels and property keys from the spec only ever travel as step arguments, never as script
text. Rows come back as lists in a fixed layout:

* vertices: ``[id, values of key 1 (list), ..., meta-properties of meta key 1 (list), ...]``
* edges: ``[id, out-vertex id, in-vertex id, values of key 1 (list), ...]``

A :class:`Scope` describes which elements one work unit reads: a label (and for edges the
labels of both ends) and a half-open id range ``[low, high)`` of one partition. Reading
continues after an id with ``has(T.id, gt(after))`` and ``order().by(T.id)``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from gremlin_python.process.graph_traversal import GraphTraversal, GraphTraversalSource, __
from gremlin_python.process.translator import Translator
from gremlin_python.process.traversal import Column, P, T, TraversalStrategies
from gremlin_python.process.traversal import Scope as GremlinScope
from gremlin_python.statics import long
from gremlin_python.structure.graph import Graph

_INT32 = (-(2**31), 2**31 - 1)


def _g() -> GraphTraversalSource:
    return GraphTraversalSource(Graph(), TraversalStrategies())


def id_argument(value: Any) -> Any:
    """An id as a step argument: integers outside int32 go as Gremlin longs."""
    is_int = isinstance(value, int) and not isinstance(value, bool)
    if is_int and not _INT32[0] <= value <= _INT32[1]:
        return long(value)
    return value


@dataclass(frozen=True)
class Scope:
    """The elements of one work unit."""

    edges: bool
    label: str
    out_label: str | None = None
    in_label: str | None = None
    low: Any = None  # inclusive; None: unbounded
    high: Any = None  # exclusive; None: unbounded

    def with_bounds(self, low: Any, high: Any) -> Scope:
        return Scope(self.edges, self.label, self.out_label, self.in_label, low, high)


def elements(scope: Scope, *, after: Any = None, via_out: bool = False) -> GraphTraversal:
    """The unit's elements with ids after ``after`` (not yet ordered).

    With ``via_out``, edges are reached from their out-vertices
    (``V().hasLabel(out).outE(label)``): each edge has one out-vertex, so this is the same
    set, and the adjacency lookup is cheaper than a per-edge ``outV()`` check. (A count
    gains; in TinkerGraph a sorted stream does not, so rows keep ``E()``.)"""
    if scope.edges and via_out:
        t = _g().V().has_label(scope.out_label).out_e(scope.label)
    else:
        t = (_g().E() if scope.edges else _g().V()).has_label(scope.label)
    if after is not None:
        t = t.has(T.id, P.gt(id_argument(after)))
    elif scope.low is not None:
        t = t.has(T.id, P.gte(id_argument(scope.low)))
    if scope.high is not None:
        t = t.has(T.id, P.lt(id_argument(scope.high)))
    if scope.edges and not via_out:
        t = t.where(__.out_v().has_label(scope.out_label))
    if scope.edges:
        t = t.where(__.in_v().has_label(scope.in_label))
    return t


def rows(
    scope: Scope, keys: list[str], meta_keys: list[str], *, after: Any = None
) -> GraphTraversal:
    """Rows of the unit in id order (layout in the module docstring)."""
    names = ["i"]
    if scope.edges:
        names += ["s", "t"]
    names += [f"p{n}" for n in range(len(keys))] + [f"m{n}" for n in range(len(meta_keys))]
    t = elements(scope, after=after).order().by(T.id).project(*names).by(T.id)
    if scope.edges:
        t = t.by(__.out_v().id_()).by(__.in_v().id_())
    for key in keys:
        t = t.by(__.values(key).fold())
    for key in meta_keys:
        t = t.by(__.properties(key).project("v", "m").by(T.value).by(__.value_map()).fold())
    return t.select(Column.values)


def count(scope: Scope) -> GraphTraversal:
    return elements(scope, via_out=True).count()


def id_extreme(scope: Scope, which: str) -> GraphTraversal:
    """The smallest (``which="min"``) or largest id of the unit: a streaming aggregate, no
    sort (no result, or null, when the unit is empty)."""
    ids = elements(scope, via_out=True).id_()  # the same set, reached as count() does
    return ids.min_() if which == "min" else ids.max_()


def property_keys(scope: Scope, limit: int) -> GraphTraversal:
    """Distinct property keys of the unit's elements (at most ``limit``)."""
    return elements(scope).properties().key().dedup().limit(limit)


def boundaries(scope: Scope, positions: list[int]) -> GraphTraversal:
    """The ids at ``positions`` of the unit's sorted ids, in one sort: a map ``b<n> -> [id]``
    (an empty list where a position is past the end)."""
    t = elements(scope).id_().order().fold().project(*[f"b{n}" for n in range(len(positions))])
    for pos in positions:
        t = t.by(__.range_(GremlinScope.local, pos, pos + 1))
    return t


def label_counts(edges: bool) -> GraphTraversal:
    t = _g().E() if edges else _g().V()
    return t.group_count().by(T.label)


def edge_label_pairs() -> GraphTraversal:
    """``{(edge label, out label, in label): count}``."""
    pair = __.project("l", "o", "i").by(T.label).by(__.out_v().label()).by(__.in_v().label())
    return _g().E().group_count().by(pair.select(Column.values))


def property_sample(edges: bool, label: str, size: int) -> GraphTraversal:
    """``[{key: [values...]}]`` over the first ``size`` elements of a label in id order."""
    t = _g().E() if edges else _g().V()
    t = t.has_label(label).order().by(T.id).limit(size)
    return t.properties().group().by(T.key).by(__.value().fold())


def render(traversal: GraphTraversal, traversal_source: str) -> str:
    """Gremlin text of a traversal, for provenance and audit."""
    return str(Translator(traversal_source).translate(traversal.bytecode))
