"""Contract checks (``checks.expect`` in the spec) and snapshot notes.

The contract names vertex types and relations with optional row-count ranges, and
properties each vertex type must carry. Each named thing is one subject; its count is 1
when the contract is broken and 0 when it holds.
"""

from __future__ import annotations

from typing import Any

from graphmill._text import plural
from graphmill.validate._context import CheckContext, Outcome
from graphmill.validate.rules import count_in_range, missing_or_empty


def contract_vertex_types(ctx: CheckContext) -> list[str]:
    """Vertex types the contract names: under ``vertex_types`` then under ``properties``."""
    expect = ctx.spec.checks.expect
    return list(dict.fromkeys([*expect.get("vertex_types", {}), *expect.get("properties", {})]))


def _rows(ctx: CheckContext, table: str, name: str) -> int | None:
    return ctx.rows(table, name) if ctx.has(table, name) else None


def _broken(why: str | None, what: str) -> str:
    if why == "absent":
        return f"the contract expects {what}, but the snapshot has no such table"
    if why == "empty":
        return f"the contract expects {what}, but the snapshot's table of it is empty"
    return f"{what} is present and not empty, as the contract expects"


def check_expected_vertex_type(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    name = subject["vertex_type"]
    rows = _rows(ctx, "vertices", name)
    why = missing_or_empty(rows)
    return Outcome(
        int(why is not None), 1, _broken(why, f"vertex type {name}"), details={"rows": rows}
    )


def check_expected_relation(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    name = subject["relation"]
    rows = _rows(ctx, "edges", name)
    why = missing_or_empty(rows)
    return Outcome(
        int(why is not None), 1, _broken(why, f"relation {name}"), details={"rows": rows}
    )


def check_expected_property(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """A named property must be a column of its vertex table with at least one value."""
    name, prop = subject["vertex_type"], subject["property"]
    present = ctx.has("vertices", name) and prop in ctx.vertices(name).column_names
    column = ctx.vertices(name).column(prop) if present else None
    values = None if column is None else len(column) - column.null_count
    why = missing_or_empty(values)
    what = f"property {prop} on vertex type {name}"
    counted = plural(values or 0, "value")
    text = {
        "absent": f"the contract expects {what}, but the snapshot has no such column",
        "empty": f"the contract expects {what}, but no vertex has a value for it",
    }.get(why or "", f"{what} is present with {counted}, as the contract expects")
    return Outcome(int(why is not None), 1, text, details={"values": values})


def _bounds_text(bounds: dict[str, Any]) -> str:
    low, high = bounds.get("min"), bounds.get("max")
    if low is not None and high is not None:
        return f"between {low} and {high}"
    return f"at least {low}" if low is not None else f"at most {high}"


def check_count_range(ctx: CheckContext, subject: dict[str, str]) -> Outcome:
    """A table's row count within the contract's ``min``/``max`` (an absent table has 0)."""
    if "relation" in subject:
        table, name = "edges", subject["relation"]
        bounds = ctx.spec.checks.expect["relations"][name]
    else:
        table, name = "vertices", subject["vertex_type"]
        bounds = ctx.spec.checks.expect["vertex_types"][name]
    rows = _rows(ctx, table, name) or 0
    ok = count_in_range(rows, bounds)
    what = "edges" if table == "edges" else "vertices"
    return Outcome(
        int(not ok),
        1,
        f"{name} has {rows} {what}; the contract expects {_bounds_text(bounds)}",
        details={"rows": rows, "min": bounds.get("min"), "max": bounds.get("max")},
    )


def check_snapshot_notes(ctx: CheckContext, subject: dict[str, str]) -> list[Outcome]:
    """One info finding per warning recorded in ``snapshot.json`` when it was pulled."""
    notes = ctx.snapshot.document.get("warnings", [])
    return [
        Outcome(1, 1, note, details={"note": index}, found=True) for index, note in enumerate(notes)
    ]
