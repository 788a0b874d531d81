"""Cross-checks of a ``links`` task (see :mod:`graphmill._spec_tasks`).

Contract: a links task lists declared relations (did-you-mean), takes no ``label`` and no
``relation``/``property``; its negatives' parts must be parts that can hold edges;
``by_time`` names a declared property of the edge (or of its source or target vertex type)
of a time or number kind, with both cuts fractions or both ISO 8601 dates, validation before
test; ``by_time`` and ``unseen_vertices`` do not combine.
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import TYPE_CHECKING

from graphmill._spec_explain import did_you_mean
from graphmill._spec_tasks import refuse_label
from graphmill.errors import SpecError, quote_value

if TYPE_CHECKING:
    from graphmill.spec import PipelineSpec, TimeCut

#: Declared kinds a timestamp property may have.
TIME_KINDS = frozenset({"datetime", "date", "integer", "float"})


def check_link_task(spec: PipelineSpec) -> None:
    """Raise :class:`SpecError` for a links task that cannot be built as written."""
    task = spec.task
    assert task is not None and task.links is not None
    refuse_label(spec)
    for key in ("relation", "property"):
        if getattr(task, key) is not None:
            raise SpecError(
                f"task.{key} is for edge-classes / edge-values; a links task lists relations",
                key_path=f"task.{key}",
                hint="use task.relations: [source_type.name.target_type, ...]",
            )
    links = task.links
    if not links.relations:
        raise SpecError(
            "a links task needs task.relations",
            key_path="task",
            hint="list the relations to predict as 'source_type.name.target_type'",
        )
    dotted = [r.key.dotted for r in spec.relations]
    for i, name in enumerate(links.relations):
        if name not in dotted:
            raise SpecError(
                f"no relation {quote_value(name)} is declared{did_you_mean(name, dotted)}",
                key_path=f"task.relations[{i}]",
                hint="write it as 'source_type.name.target_type' of a declared relation",
            )
    if links.by_time is not None:
        if links.unseen_vertices:
            raise SpecError(
                "by_time and unseen_vertices do not combine: time decides the parts",
                key_path="task.unseen_vertices",
                hint="choose one of them",
            )
        _check_time(spec, links.by_time)


def _check_time(spec: PipelineSpec, cut: TimeCut) -> None:
    assert spec.task is not None and spec.task.links is not None
    for name in spec.task.links.relations:
        rel = next(r for r in spec.relations if r.key.dotted == name)
        if cut.of == "edge":
            owner, props = f"relation {name}", rel.properties
        else:
            vt = rel.key.source_type if cut.of == "source" else rel.key.target_type
            owner, props = f"vertex type {vt!r}", spec.vertex_types[vt].properties
        declared = [p.name for p in props]
        if cut.property not in declared:
            raise SpecError(
                f"{owner} declares no property {quote_value(cut.property)}"
                f"{did_you_mean(cut.property, declared)}",
                key_path="task.by_time.property",
                hint=f"declare it on {owner}, or set by_time.of",
            )
        kind = next(p for p in props if p.name == cut.property).kind
        if kind is not None and kind not in TIME_KINDS:
            raise SpecError(
                f"property {cut.property!r} is declared {kind}, not a time",
                key_path="task.by_time.property",
                hint="declare it datetime, date, integer or float",
            )
    low, high = (
        cut_value(cut.validation_from, "validation_from"),
        cut_value(cut.test_from, "test_from"),
    )
    if type(low) is not type(high):
        raise SpecError(
            "validation_from and test_from must both be fractions or both dates",
            key_path="task.by_time.test_from",
        )
    if low > high:  # type: ignore[operator]
        raise SpecError(
            "validation_from is after test_from",
            key_path="task.by_time.validation_from",
            hint="validation comes before test",
        )


def cut_value(value: float | str, key: str) -> float | datetime:
    """A cut as a fraction, or as an aware datetime (UTC when the text has no offset)."""
    if not isinstance(value, str):
        return float(value)
    try:
        moment = datetime.fromisoformat(value)
    except ValueError:
        raise SpecError(
            f"{quote_value(value)} is not an ISO 8601 date or datetime",
            key_path=f"task.by_time.{key}",
            hint="write e.g. 2024-03-01 or 2024-03-01T12:00:00+00:00, or a fraction",
        ) from None
    return moment if moment.tzinfo else moment.replace(tzinfo=UTC)
