"""A declared ``kind``, applied the same way by every source (the "one gate" contract).

A value that cannot be read as its property's declared kind is *ill-typed*: null in the
column, counted under the kind ``ill-typed``, and its text kept for the snapshot (see
:class:`~graphmill.connectors.base.Page`). Integers are read as floats where ``float`` is
declared; where ``string`` is declared every value is read as its text. List columns (a
Gremlin ``multi`` property, a Parquet list column) keep their elements' own kinds for now;
RDF reads each value of a ``multi`` property on its own, so the gate covers it.
"""

from __future__ import annotations

import pyarrow as pa
import pyarrow.compute as pc

from graphmill._columns import KIND_TO_ARROW, conform, is_multi, kind_of_type, value_kinds_of

ILL_TYPED = "ill-typed"
Typed = tuple[pa.Array, dict[str, int], pa.Array | None]


def accepted_kinds(declared: str) -> set[str]:
    """The value kinds a column of the ``declared`` kind takes without loss."""
    return {"integer", "float"} if declared == "float" else {declared}


def ill_typed_text(text: pa.Array, typed: pa.Array) -> pa.Array | None:
    """The text of values present in ``text`` but null in ``typed`` (null elsewhere), or
    None when there are none."""
    bad = pc.and_(pc.is_valid(text), pc.is_null(typed))
    if not pc.any(bad).as_py():
        return None
    return pc.if_else(bad, text.cast(pa.string()), pa.scalar(None, pa.string()))


def apply_declared(column: pa.Array, declared: str | None) -> Typed:
    """A typed column (one Arrow type for all its values) under a declared kind: the column,
    its kind counts, and the text of its ill-typed values (None if there are none)."""
    kinds = value_kinds_of(column)
    if declared is None or is_multi(column.type) or declared not in KIND_TO_ARROW:
        return column, kinds, None
    if declared == "string":
        text = conform(column, pa.string())
        return (
            text,
            ({"string": len(text) - text.null_count} if len(text) > text.null_count else {}),
            None,
        )
    if kind_of_type(column.type) in accepted_kinds(declared) or pa.types.is_null(column.type):
        return column, kinds, None
    present = len(column) - column.null_count
    raw = conform(column, pa.string()) if present else None
    return (
        pa.nulls(len(column), KIND_TO_ARROW[declared]),
        ({ILL_TYPED: present} if present else {}),
        raw,
    )
