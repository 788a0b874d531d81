"""Cursors of the gremlin source: where a unit's reading stopped, as JSON.

A cursor holds the last id read (with its type, so ``7`` and ``"7"`` stay apart), the rows
read so far, and the partition's id range, so a resumed pull can tell that it still reads
the same range.

>>> state = start(Scope(edges=False, label="person")).advanced(42, 10)
>>> encode(state)
'{"after": ["integer", 42], "high": null, "low": null, "rows": 10}'
>>> decode(encode(state), None).after
42
"""

from __future__ import annotations

import json
import uuid
from dataclasses import dataclass, replace
from typing import Any

from graphmill.connectors.gremlin._traversals import Scope
from graphmill.errors import InputError


@dataclass(frozen=True)
class CursorState:
    after: Any
    rows: int
    low: Any
    high: Any

    def advanced(self, last_id: Any, rows: int) -> CursorState:
        return replace(self, after=last_id, rows=self.rows + rows)


def start(scope: Scope) -> CursorState:
    return CursorState(after=None, rows=0, low=scope.low, high=scope.high)


def same_bounds(state: CursorState, scope: Scope) -> bool:
    return bool(state.low == scope.low and state.high == scope.high)


def typed(value: Any) -> list[Any] | None:
    """``[type, value]`` for JSON; None stays None."""
    if value is None:
        return None
    if isinstance(value, bool):
        raise InputError(f"a boolean element id ({value!r}) cannot be ordered by graphmill")
    if isinstance(value, int):
        return ["integer", int(value)]
    if isinstance(value, float):
        return ["float", float(value)]
    if isinstance(value, uuid.UUID):
        return ["uuid", str(value)]
    if isinstance(value, str):
        return ["string", str(value)]
    raise InputError(
        f"element ids of type {type(value).__name__} are not supported for paging",
        hint="graphmill pages by id and supports number, string and UUID ids",
    )


def untyped(pair: list[Any] | None) -> Any:
    if pair is None:
        return None
    kind, value = pair
    if kind == "uuid":
        return uuid.UUID(value)
    if kind in ("integer", "float", "string"):
        return value
    raise ValueError(f"unknown id type {kind!r} in cursor")


def encode(state: CursorState) -> str:
    document = {
        "after": typed(state.after),
        "rows": state.rows,
        "low": typed(state.low),
        "high": typed(state.high),
    }
    return json.dumps(document, sort_keys=True)


def decode(text: str, unit: Any) -> CursorState:
    """Parse a cursor this module wrote; anything else is an :class:`InputError`."""
    try:
        doc = json.loads(text)
        return CursorState(
            after=untyped(doc["after"]),
            rows=int(doc["rows"]),
            low=untyped(doc["low"]),
            high=untyped(doc["high"]),
        )
    except (ValueError, KeyError, TypeError) as exc:
        where = getattr(unit, "unit_id", "a work unit")
        raise InputError(
            f"the checkpoint of {where} is not a gremlin cursor ({exc})",
            hint="delete the snapshot's '.staging' folder and pull again",
        ) from exc
