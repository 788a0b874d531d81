"""Damaged CSV and Parquet table files: exit 2 naming the file, the line (CSV, physical lines,
the header is line 1) or the row (Parquet), and the column.

A good project has a vertex file and an edge file, each with a property of every declared
kind (integer, float, boolean, date, datetime, string); every case damages one cell, one
header name, one column type or the whole file, in the ID, an endpoint or a property column.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import pyarrow as pa
import pyarrow.parquet as pq

from tests.bad_inputs._corpus import Case, spec_argv, table_spec

KINDS = ("integer", "float", "boolean", "date", "datetime", "string")
VERTEX = {
    "ref": ["p1", "p2", "p3", "p4"],
    "n_integer": ["30", "+41", "-9223372036854775808", "38"],
    "n_float": ["1.5", "2", "-0.25", "1e3"],
    "n_boolean": ["true", "false", "TRUE", ""],
    "n_date": ["2020-01-02", "2021-12-31", "1999-02-28", ""],
    "n_datetime": ["2020-01-02T03:04:05Z", "2020-01-02 03:04", "2021-06-01T00:00:00+02:00", ""],
    "n_string": ["red", "blue", "red", "green"],
}
EDGE = {
    "a": ["p1", "p2", "p3", "p4"],
    "b": ["p2", "p3", "p4", "p1"],
    **{f"w_{k}": VERTEX[f"n_{k}"] for k in KINDS},
}
ROLES = {"vertex": ("people", VERTEX, ["ref"]), "edge": ("knows", EDGE, ["a", "b"])}


def spec(fmt: str = "csv", *, vertex_props: str | None = None) -> str:
    props = vertex_props or "{" + ", ".join(f"n_{k}: {{kind: {k}}}" for k in KINDS) + "}"
    edge_props = "{" + ", ".join(f"w_{k}: {{kind: {k}}}" for k in KINDS) + "}"
    return table_spec(
        vertex_file=f"{{path: people.{fmt}, id_column: ref, type: person}}",
        edge_file=(f"{{path: knows.{fmt}, source_column: a, target_column: b, relation: knows}}"),
        properties=props,
        relations=f"[{{from: person, name: knows, to: person, properties: {edge_props}}}]",
    )


def csv_text(columns: dict[str, list[str]]) -> list[list[str]]:
    """Header and rows as cells (quoting is the cases' business)."""
    names = list(columns)
    return [names] + [[columns[n][i] for n in names] for i in range(len(columns[names[0]]))]


def joined(cells: list[list[str]]) -> bytes:
    return ("\n".join(",".join(row) for row in cells) + "\n").encode()


def csv_project(vertex: bytes | None = None, edge: bytes | None = None) -> dict[str, Any]:
    return {
        "spec.yaml": spec(),
        "people.csv": vertex if vertex is not None else joined(csv_text(VERTEX)),
        "knows.csv": edge if edge is not None else joined(csv_text(EDGE)),
    }


def _cell_damage(columns: dict[str, list[str]], column: str, row: int, raw: bytes) -> bytes:
    """The CSV with the cell at (data row ``row``, ``column``) replaced by ``raw`` bytes."""
    cells = csv_text(columns)
    index = cells[0].index(column)
    marker = "\x00MARK\x00"
    cells[row + 1][index] = marker
    return joined(cells).replace(marker.encode(), raw)


CASES: list[Case] = []


def add(name: str, files: dict[str, Any], where: str, says: str | None = None, **more: Any) -> None:
    CASES.append(
        Case(
            name=f"tables-{name}",
            category="tables",
            files=files,
            argv=spec_argv("pull"),
            exit_code=more.pop("exit_code", 2),
            where=where,
            says=says,
            **more,
        )
    )


# --- CSV: every column of both files, one damaged cell or header name each ----------------

for role, (stem, columns, _keys) in ROLES.items():
    for column in columns:
        # data row 2 (0-based) starts on physical line 4
        bad_utf8 = _cell_damage(columns, column, 2, b"x\xff\xfey")
        add(
            f"csv-{role}-{column}-not-utf8",
            csv_project(**{role: bad_utf8}),
            f"{{dir}}/{stem}.csv:4",
            f"in column '{column}') is not UTF-8 text",
        )
        open_quote = _cell_damage(columns, column, 1, b'"never closed')
        add(
            f"csv-{role}-{column}-unclosed-quote",
            csv_project(**{role: open_quote}),
            f"{{dir}}/{stem}.csv:3",
            "not closed",
        )
        twice = {**columns, f"{column}\x01": columns[column]}
        text = joined(csv_text(twice)).replace(b"\x01", b"")
        add(
            f"csv-{role}-{column}-duplicate-header",
            csv_project(**{role: text}),
            f"{{dir}}/{stem}.csv:1",
            f"column '{column}' appears 2 times",
        )
        renamed = {(f"{column}_x" if n == column else n): v for n, v in columns.items()}
        add(
            f"csv-{role}-{column}-missing",
            csv_project(**{role: joined(csv_text(renamed))}),
            f"{{dir}}/{stem}.csv:1",
            f"missing column '{column}'",
        )

# --- CSV: rows, IDs and whole files --------------------------------------------------------

for role, (stem, columns, keys) in ROLES.items():
    kw = role
    cells = csv_text(columns)
    long_row = [row + (["extra"] if i == 3 else []) for i, row in enumerate(cells)]
    add(
        f"csv-{role}-row-too-long",
        csv_project(**{kw: joined(long_row)}),
        f"{{dir}}/{stem}.csv:4",
        "the row has",
    )
    short_row = [row[:-2] if i == 2 else row for i, row in enumerate(cells)]
    add(
        f"csv-{role}-row-too-short",
        csv_project(**{kw: joined(short_row)}),
        f"{{dir}}/{stem}.csv:3",
        "the row has",
    )
    add(
        f"csv-{role}-empty-file",
        csv_project(**{kw: b""}),
        f"{{dir}}/{stem}.csv",
        "the file is empty",
    )
    add(
        f"csv-{role}-only-bom",
        csv_project(**{kw: b"\xef\xbb\xbf\n"}),
        f"{{dir}}/{stem}.csv",
        "the file is empty",
    )
    add(
        f"csv-{role}-only-blank-lines",
        csv_project(**{kw: b"\n\n\n"}),
        f"{{dir}}/{stem}.csv",
        "the file is empty",
    )
    header_bytes = joined(cells).replace(keys[0].encode(), keys[0].encode() + b"\xff", 1)
    add(
        f"csv-{role}-header-not-utf8",
        csv_project(**{kw: header_bytes}),
        f"{{dir}}/{stem}.csv:1",
        "not UTF-8",
    )
    semicolons = joined(cells).replace(b",", b";")
    add(
        f"csv-{role}-other-delimiter",
        csv_project(**{kw: semicolons}),
        f"{{dir}}/{stem}.csv:1",
        "seems delimited by ';'",
    )
    bom_then_ragged = b"\xef\xbb\xbf" + joined(long_row)
    add(
        f"csv-{role}-bom-and-long-row",
        csv_project(**{kw: bom_then_ragged}),
        f"{{dir}}/{stem}.csv:4",
        "the row has",
    )
    for key in keys:
        empty = [
            [("" if (i == 3 and n == key) else v) for n, v in zip(cells[0], row, strict=True)]
            for i, row in enumerate(cells)
        ]
        add(
            f"csv-{role}-{key}-empty-id",
            csv_project(**{kw: joined(empty)}),
            f"{{dir}}/{stem}.csv:4",
            f"column '{key}' is empty in data row 3",
        )
        # a quoted value over two lines moves every later row one line down
        multi = [list(row) for row in empty]
        multi[1][-1] = '"two\nlines"'
        add(
            f"csv-{role}-{key}-empty-id-after-multiline",
            csv_project(**{kw: joined(multi)}),
            f"{{dir}}/{stem}.csv:5",
            "data row 3",
        )

add(
    "csv-date-format-on-an-integer",
    {
        **csv_project(),
        "spec.yaml": spec(vertex_props="{n_integer: {kind: integer, date_format: '%d/%m/%Y'}}"),
    },
    "{dir}/spec.yaml",
    "is not one of 'date', 'datetime'",
)

# --- Parquet: column types that cannot be IDs or properties, broken files ------------------


def _table(columns: dict[str, list[str]]) -> dict[str, pa.Array]:
    return {n: pa.array(v, pa.string()) for n, v in columns.items()}


def parquet_setup(
    stem: str, change: Callable[[dict[str, pa.Array]], Any]
) -> Callable[[Path], None]:
    def setup(root: Path) -> None:
        for name, columns in (("people", VERTEX), ("knows", EDGE)):
            arrays = _table(columns)
            if name == stem:
                result = change(arrays)
                if isinstance(result, pa.Table):
                    pq.write_table(result, root / f"{name}.parquet")
                    continue
            pq.write_table(pa.table(arrays), root / f"{name}.parquet")

    return setup


def replaced(column: str, array: pa.Array) -> Callable[[dict[str, pa.Array]], None]:
    return lambda arrays: arrays.__setitem__(column, array)


def duplicated(column: str) -> Callable[[dict[str, pa.Array]], pa.Table]:
    def change(arrays: dict[str, pa.Array]) -> pa.Table:
        names = [*arrays, column]
        return pa.Table.from_arrays([arrays[n] for n in names], names=names)

    return change


ID_TYPES: dict[str, tuple[pa.Array, str, str | None]] = {
    "list": (pa.array([["p1"], ["p2"], ["p3"], ["p4"]]), "list<", None),
    "struct": (pa.array([{"v": "p1"}, {"v": "p2"}, {"v": "p3"}, {"v": "p4"}]), "struct<", None),
    "map": (pa.array([[("k", "p1")]] * 4, pa.map_(pa.string(), pa.string())), "map<", None),
    "float": (pa.array([1.0, 2.0, 3.0, 4.0]), "double", None),
    "binary-not-utf8": (pa.array([b"p1", b"p2", b"\xff\xfe", b"p4"]), "not UTF-8", "row 3"),
    "null": (pa.array(["p1", None, "p3", "p4"]), "is empty", "row 2"),
    "empty-string": (pa.array(["p1", "p2", "p3", ""]), "is empty", "row 4"),
    "large-binary-not-utf8": (
        pa.array([b"p1", b"\x80", b"p3", b"p4"], pa.large_binary()),
        "not UTF-8",
        "row 2",
    ),
}
PROPERTY_TYPES: dict[str, pa.Array] = {
    "struct": pa.array([{"v": 1}] * 4),
    "map": pa.array([[("k", 1)]] * 4, pa.map_(pa.string(), pa.int64())),
    "duration": pa.array([1, 2, 3, 4], pa.duration("s")),
    "time": pa.array([1, 2, 3, 4], pa.time32("s")),
    "list-of-lists": pa.array([[[1]], [[2]], [], None]),
}


def parquet_project() -> dict[str, Any]:
    return {"spec.yaml": spec("parquet")}


for role, (stem, _columns, keys) in ROLES.items():
    where = f"{{dir}}/{stem}.parquet"
    for key in keys:
        for type_name, (array, says, row) in ID_TYPES.items():
            add(
                f"parquet-{role}-{key}-{type_name}",
                parquet_project(),
                where if row is None else f"{where}, record {row}",
                says,
                setup=parquet_setup(stem, replaced(key, array)),
            )
        add(
            f"parquet-{role}-{key}-duplicate",
            parquet_project(),
            where,
            f"'{key}' appears 2 times",
            setup=parquet_setup(stem, duplicated(key)),
        )
    for kind in KINDS:
        column = ("n_" if role == "vertex" else "w_") + kind
        for type_name, array in PROPERTY_TYPES.items():
            add(
                f"parquet-{role}-{kind}-{type_name}",
                parquet_project(),
                where,
                f"column '{column}' has",
                setup=parquet_setup(stem, replaced(column, array)),
            )
        add(
            f"parquet-{role}-{kind}-duplicate",
            parquet_project(),
            where,
            f"'{column}' appears 2 times",
            setup=parquet_setup(stem, duplicated(column)),
        )


def _write_bytes(stem: str, make: Callable[[bytes], bytes]) -> Callable[[Path], None]:
    def setup(root: Path) -> None:
        parquet_setup("", lambda arrays: None)(root)
        path = root / f"{stem}.parquet"
        path.write_bytes(make(path.read_bytes()))

    return setup


for role, (stem, _columns, _keys) in ROLES.items():
    where = f"{{dir}}/{stem}.parquet"
    add(
        f"parquet-{role}-empty-file",
        parquet_project(),
        where,
        "the file is empty",
        setup=_write_bytes(stem, lambda d: b""),
    )
    add(
        f"parquet-{role}-garbage",
        parquet_project(),
        where,
        "cannot read the file",
        setup=_write_bytes(stem, lambda d: b"not parquet at all" * 10),
    )
    add(
        f"parquet-{role}-truncated",
        parquet_project(),
        where,
        "cannot read the file",
        setup=_write_bytes(stem, lambda d: d[: len(d) // 2]),
    )
    add(
        f"parquet-{role}-csv-inside",
        parquet_project(),
        where,
        "cannot read the file",
        setup=_write_bytes(stem, lambda d: joined(csv_text(VERTEX))),
    )
    add(
        f"parquet-{role}-footer-damaged",
        parquet_project(),
        where,
        "cannot read the file",
        setup=_write_bytes(stem, lambda d: d[:-12] + b"\xff" * 4 + d[-8:]),
    )

# --- the type_column / relation_column selectors ---------------------------------------------

SELECTED_VERTEX = {**VERTEX, "kind": ["person"] * 4}
SELECTED_EDGE = {**EDGE, "rel": ["knows"] * 4}
SELECTORS = {"vertex": ("people", SELECTED_VERTEX, "kind"), "edge": ("knows", SELECTED_EDGE, "rel")}


def selector_spec(fmt: str) -> str:
    return (
        spec(fmt)
        .replace(
            f"{{path: people.{fmt}, id_column: ref, type: person}}",
            f"{{path: people.{fmt}, id_column: ref, type_column: kind}}",
        )
        .replace("relation: knows}", "relation_column: rel}")
    )


for role, (stem, columns, selector) in SELECTORS.items():
    other_stem, other = (
        ("knows", SELECTED_EDGE) if role == "vertex" else ("people", SELECTED_VERTEX)
    )
    good_other = {f"{other_stem}.csv": joined(csv_text(other))}
    csv_damage = {
        "not-utf8": (_cell_damage(columns, selector, 2, b"per\xffson"), 4, "is not UTF-8"),
        "unclosed-quote": (_cell_damage(columns, selector, 1, b'"person'), 3, "not closed"),
        "duplicate": (
            joined(csv_text({**columns, f"{selector}\x01": columns[selector]})).replace(
                b"\x01", b""
            ),
            1,
            f"column '{selector}' appears 2 times",
        ),
        "missing": (
            joined(csv_text({k: v for k, v in columns.items() if k != selector})),
            1,
            f"missing column '{selector}'",
        ),
    }
    for name, (data, line, says) in csv_damage.items():
        add(
            f"csv-{role}-selector-{selector}-{name}",
            {"spec.yaml": selector_spec("csv"), f"{stem}.csv": data, **good_other},
            f"{{dir}}/{stem}.csv:{line}",
            says,
        )
    parquet_damage: dict[str, tuple[pa.Array, str, str | None]] = {
        "list": (pa.array([["person"]] * 4), "list<", None),
        "struct": (pa.array([{"t": "person"}] * 4), "struct<", None),
        "map": (pa.array([[("k", "v")]] * 4, pa.map_(pa.string(), pa.string())), "map<", None),
        "binary-not-utf8": (
            pa.array([b"person", b"\xc3", b"person", b"person"]),
            "not UTF-8",
            "row 2",
        ),
    }

    def selector_setup(stem: str, selector: str, array: pa.Array) -> Callable[[Path], None]:
        def setup(root: Path) -> None:
            for name, cols, sel in (
                ("people", SELECTED_VERTEX, "kind"),
                ("knows", SELECTED_EDGE, "rel"),
            ):
                arrays = _table(cols)
                if name == stem:
                    arrays[sel] = array
                pq.write_table(pa.table(arrays), root / f"{name}.parquet")

        return setup

    for name, (array, says, row) in parquet_damage.items():
        where = f"{{dir}}/{stem}.parquet" + ("" if row is None else f", record {row}")
        add(
            f"parquet-{role}-selector-{selector}-{name}",
            {"spec.yaml": selector_spec("parquet")},
            where,
            says,
            setup=selector_setup(stem, selector, array),
        )

# --- date_format in the spec ---------------------------------------------------------------

for name, props, says in [
    (
        "date-format-without-kind",
        "{n_date: {date_format: '%d/%m/%Y'}}",
        "missing required key 'kind'",
    ),
    (
        "date-format-without-directive",
        "{n_date: {kind: date, date_format: 'dd/mm/yyyy'}}",
        "does not have the expected form",
    ),
]:
    add(
        f"csv-{name}",
        {**csv_project(), "spec.yaml": spec(vertex_props=props)},
        "{dir}/spec.yaml",
        says,
    )

# --- a header of many long names: the message stays one short line ------------------------

add(
    "csv-vertex-missing-among-long-names",
    csv_project(
        vertex=(",".join(f"{'x' * 2000}{i}" for i in range(40)) + "\n" + "1," * 39 + "1\n").encode()
    ),
    "{dir}/people.csv:1",
    "missing column",
)

# --- Parquet metadata whose column name is not UTF-8 ----------------------------------------

for role, (stem, columns, _keys) in ROLES.items():
    name = list(columns)[-1].encode()
    add(
        f"parquet-{role}-column-name-not-utf8",
        parquet_project(),
        f"{{dir}}/{stem}.parquet",
        "not UTF-8",
        setup=_write_bytes(stem, lambda d, name=name: d.replace(name, name[:-1] + b"\xff")),
    )
