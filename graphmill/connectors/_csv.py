"""CSV files for the table-files source: header, Arrow batches, and exact lines for defects.

The happy path is Arrow's streaming CSV reader (every cell read as text) plus one fast count
of quote characters. Only when something is wrong does :func:`locate_defect` re-read the
file with Python's ``csv`` module to find the *physical* line (1-based, the header is line 1,
a quoted value spanning lines counts each of them) of the first defect: bytes that are not
UTF-8, a row with more or fewer cells than the header, a quote that is never closed.
"""

from __future__ import annotations

import csv
import io
import sys
from collections.abc import Iterator
from pathlib import Path

import pyarrow as pa
import pyarrow.csv as pacsv

from graphmill.errors import InputError

BLOCK_SIZE = 16 << 20
BOM = b"\xef\xbb\xbf"
_FIX = "fix the file (or its delimiter in the spec)"


def read_header(path: Path, delimiter: str) -> list[str]:
    """The header's column names, a byte-order mark stripped; refuses an empty file, a header
    that is not UTF-8 and a name given twice."""
    with open(path, "rb") as fh:
        head = b""
        while b"\n" not in head:
            chunk = fh.read(1 << 16)
            if not chunk:
                break
            head += chunk
    head = head.removeprefix(BOM)
    if not head.strip():
        raise InputError(
            "the file is empty (not even a header line)",
            file=str(path),
            hint="write a header line naming the columns, then one line per row",
        )
    try:
        head.split(b"\n", 1)[0].decode("utf-8")
    except UnicodeDecodeError:
        raise InputError(
            "the header is not UTF-8 text", file=str(path), line=1, hint="save the file as UTF-8"
        ) from None
    text = head.decode("utf-8", errors="replace")
    try:
        names = next(csv.reader(io.StringIO(text, newline=""), delimiter=delimiter), [])
    except csv.Error as exc:
        raise InputError(
            f"the header cannot be read as CSV ({exc})",
            file=str(path),
            line=1,
            hint="quote names that hold a delimiter or a line break, and close every quote",
        ) from None
    return names


def require_columns(
    present: list[str], needed: list[str], path: Path, *, line: int | None = 1
) -> None:
    """Each needed column is in the header (or schema) exactly once."""
    for name in needed:
        seen = [i + 1 for i, n in enumerate(present) if n == name]
        if len(seen) > 1:
            raise InputError(
                f"column {name!r} appears {len(seen)} times among the file's columns "
                f"(columns {', '.join(map(str, seen[:5]))}{', ...' if len(seen) > 5 else ''})",
                file=str(path),
                line=line,
                hint="give each column a distinct name",
            )
    missing = [c for c in needed if c not in present]
    if missing:
        # at most 10 names of at most 30 characters: the message stays one short line
        shown = ", ".join(repr(n[:30]) for n in present[:10])
        shown += ", ..." if len(present) > 10 else ""
        import difflib  # the gate: the same did-you-mean as absent-property's

        close = difflib.get_close_matches(missing[0], present, n=1, cutoff=0.6)
        guess = f"did you mean {close[0][:30]!r}? " if close else ""
        raise InputError(
            f"missing column {missing[0]!r} ({guess}the file has: {shown})",
            file=str(path),
            line=line,
            hint="rename the column in the file or change the column name in the spec",
        )


def csv_batches(
    path: Path, delimiter: str, columns: list[str]
) -> Iterator[tuple[pa.RecordBatch, int]]:
    """Batches of ``columns`` as text, each with the 0-based data row index of its first row."""
    header = read_header(path, delimiter)
    if len(header) == 1 and len(columns) > 1:
        others = [d for d in (",", ";", "\t", "|") if d != delimiter and d in header[0]]
        if others:
            raise InputError(
                f"the header is one column, {header[0][:80]!r}; the file seems delimited by "
                f"{others[0]!r}",
                file=str(path),
                line=1,
                hint=f"set delimiter: {others[0]!r} in this file's entry of the spec",
            )
    require_columns(header, columns, path)
    if _odd_quotes(path):
        defect = locate_defect(path, delimiter)
        if defect is not None:
            raise defect
    try:
        reader = pacsv.open_csv(
            path,
            read_options=pacsv.ReadOptions(block_size=BLOCK_SIZE),
            parse_options=pacsv.ParseOptions(delimiter=delimiter, newlines_in_values=True),
            convert_options=pacsv.ConvertOptions(
                include_columns=columns,
                column_types={c: pa.string() for c in columns},
                strings_can_be_null=False,
            ),
        )
        row = 0
        for batch in reader:
            yield batch, row
            row += batch.num_rows
    except pa.ArrowInvalid as exc:
        raise (locate_defect(path, delimiter) or _unlocated(path, exc)) from exc


def _odd_quotes(path: Path) -> bool:
    """Whether the file holds an odd number of ``"`` (a quote never closed, most likely)."""
    count = 0
    with open(path, "rb") as fh:
        while chunk := fh.read(BLOCK_SIZE):
            count += chunk.count(b'"')
    return count % 2 == 1


def _unlocated(path: Path, exc: Exception) -> InputError:
    text = str(exc).strip().splitlines()[0] if str(exc).strip() else "cannot parse"
    return InputError(f"cannot read the CSV: {text[:200]}", file=str(path), hint=_FIX)


def locate_defect(path: Path, delimiter: str) -> InputError | None:
    """The first defect with its physical line, or ``None`` if Python's reader finds none."""
    with open(path, "rb") as fh:
        for number, raw in enumerate(fh, start=1):
            try:
                raw.decode("utf-8")
            except UnicodeDecodeError as exc:
                column = _column_of_bad_byte(raw, path, delimiter)
                return InputError(
                    f"byte {raw[exc.start]:#04x} (at byte {exc.start + 1} of the line"
                    f"{column}) is not UTF-8 text",
                    file=str(path),
                    line=number,
                    hint="save the file as UTF-8",
                )
    width = None
    for line, record in _records(path, delimiter):
        if isinstance(record, csv.Error):
            return InputError(
                f"a quoted value starting on this line is not closed properly ({record})",
                file=str(path),
                line=line,
                hint='close the quote, and write a quote inside a quoted value as ""',
            )
        if width is None:
            width = len(record)
        elif len(record) != width:
            return InputError(
                f"the row has {_cells(len(record))}, the header has {_cells(width)}",
                file=str(path),
                line=line,
                hint=f"{_FIX}; quote values that contain the delimiter",
            )
    return None


def _column_of_bad_byte(raw: bytes, path: Path, delimiter: str) -> str:
    """``", in column 'name'"`` for the cell of a one-line record holding a byte that is not
    UTF-8, or ``""`` where that cannot be told."""
    try:
        cells = next(
            csv.reader([raw.decode("utf-8", "replace").rstrip("\r\n")], delimiter=delimiter)
        )
        names = read_header(path, delimiter)
    except (csv.Error, StopIteration, InputError):
        return ""
    bad = [i for i, cell in enumerate(cells) if "\ufffd" in cell]
    return f", in column {names[bad[0]][:30]!r}" if bad and bad[0] < len(names) else ""


def _cells(n: int) -> str:
    return f"{n} cell" if n == 1 else f"{n} cells"


def physical_line(path: Path, delimiter: str, row: int) -> int | None:
    """The physical line where the 0-based data row ``row`` starts (empty lines skipped, as
    Arrow skips them)."""
    for index, (line, record) in enumerate(_records(path, delimiter)):
        if isinstance(record, csv.Error):
            return None
        if index == row + 1:
            return line
    return None


def _records(path: Path, delimiter: str) -> Iterator[tuple[int, list[str] | csv.Error]]:
    """(first physical line, cells) of every non-empty record; a parse error ends it."""
    csv.field_size_limit(min(sys.maxsize, 2**31 - 1))
    with open(path, newline="", encoding="utf-8-sig", errors="replace") as fh:
        reader = csv.reader(fh, delimiter=delimiter, strict=True)
        start = 1
        while True:
            try:
                record = next(reader)
            except StopIteration:
                return
            except csv.Error as exc:
                yield start, exc
                return
            if record:
                yield start, record
            start = reader.line_num + 1
