"""Cross-checks of the ``task`` section (see :mod:`graphmill._spec_checks`).

Contract: vertex kinds take their target from ``label``; edge kinds name a declared relation
and one of its declared properties, and no ``label``. A declared kind must fit the task: a
``float`` property is never classes (that is ``*-values``), and ``*-values`` needs a number.
Numeric targets and edge tasks cannot be stratified by class.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from graphmill._spec_explain import did_you_mean
from graphmill.errors import SpecError, quote_value

if TYPE_CHECKING:
    from graphmill.spec import PipelineSpec, PropertySpec

#: Keys of ``task`` that only a links task takes.
LINK_KEYS = frozenset({"relations", "supervision_share", "negatives", "by_time", "unseen_vertices"})

#: Declared kinds a ``*-values`` target may have.
NUMBER_KINDS = frozenset({"integer", "float"})


def check_task(spec: PipelineSpec) -> None:
    """Raise :class:`SpecError` for a task whose target is missing or cannot be that task."""
    task = spec.task
    if task is None:
        return
    link_keys = sorted(LINK_KEYS & set(spec.raw.get("task", {})))
    if task.kind != "links" and link_keys:
        raise SpecError(
            f"task.{link_keys[0]} is for links tasks, but the kind is {task.kind!r}",
            key_path=f"task.{link_keys[0]}",
            hint="remove it, or use task kind links",
        )
    if task.kind == "links":
        from graphmill._spec_links import check_link_task

        check_link_task(spec)
    elif task.on_edges:
        _check_edge_task(spec)
    else:
        for key in ("relation", "property"):
            if getattr(task, key) is not None:
                raise SpecError(
                    f"task.{key} is for edge tasks, but the kind is {task.kind!r}",
                    key_path=f"task.{key}",
                    hint="vertex tasks take their target from label; remove this key",
                )
        if spec.label is None:
            raise SpecError(
                f"task kind {task.kind!r} needs a label",
                key_path="task.kind",
                hint="declare label: {vertex_type: ..., property: ...}",
            )
        vt = spec.vertex_types.get(spec.label.vertex_type)
        prop = vt.property(spec.label.property) if vt else None
        if prop is not None:
            _check_kind_fits(prop, "label.property", task.kind)
    if task.kind != "vertex-classes" and spec.split.method == "stratified":
        raise SpecError(
            f"a {task.kind} task has no classes to stratify by",
            key_path="split.method",
            hint="use method: random (the default for this task)",
        )


def refuse_label(spec: PipelineSpec) -> None:
    """Edge and link tasks take no ``label``."""
    assert spec.task is not None
    if spec.label is not None:
        raise SpecError(
            f"task kind {spec.task.kind!r} takes its target from edges, not from label",
            key_path="label",
            hint="remove label, or use task kind vertex-classes / vertex-values",
        )


def _check_edge_task(spec: PipelineSpec) -> None:
    task = spec.task
    assert task is not None
    refuse_label(spec)
    for key in ("relation", "property"):
        if getattr(task, key) is None:
            raise SpecError(
                f"task kind {task.kind!r} needs task.{key}",
                key_path="task",
                hint="name the relation as 'source_type.name.target_type' and one of its "
                "properties",
            )
    dotted = [r.key.dotted for r in spec.relations]
    if task.relation not in dotted:
        raise SpecError(
            f"no relation {quote_value(task.relation)} is declared"
            f"{did_you_mean(str(task.relation), dotted)}",
            key_path="task.relation",
            hint="write it as 'source_type.name.target_type' of a declared relation",
        )
    rel = next(r for r in spec.relations if r.key.dotted == task.relation)
    declared = [p.name for p in rel.properties]
    if task.property not in declared:
        raise SpecError(
            f"edge property {quote_value(task.property)} is not declared for {task.relation}"
            f"{did_you_mean(str(task.property), declared)}",
            key_path="task.property",
            hint=f"declare it under that relation's properties ({task.relation})",
        )
    prop = next(p for p in rel.properties if p.name == task.property)
    _check_kind_fits(prop, "task.property", task.kind)


def _check_kind_fits(prop: PropertySpec, where: str, kind_of_task: str) -> None:
    """A float property is never classes; a values task needs a numeric kind (if declared)."""
    if prop.multi:
        raise SpecError(
            f"property {prop.name!r} holds several values, so it cannot be a target",
            key_path=where,
            hint="choose a single-valued property",
        )
    side = kind_of_task.split("-")[0]
    if prop.kind == "float" and kind_of_task.endswith("-classes"):
        raise SpecError(
            f"property {prop.name!r} is declared float: its values are numbers, not classes",
            key_path=where,
            hint=f"declare task: {{kind: {side}-values}} to predict the number "
            "(standardized on train)",
        )
    if prop.kind is not None and prop.kind not in NUMBER_KINDS and kind_of_task.endswith("-values"):
        raise SpecError(
            f"property {prop.name!r} is declared {prop.kind}, but a {kind_of_task} task needs "
            "numbers",
            key_path=where,
            hint=f"declare it integer or float, or use task kind {side}-classes",
        )
