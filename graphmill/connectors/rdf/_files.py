"""RDF files named by a spec: formats, streaming parse, and errors that name file and line.

Formats come from ``source.format`` or the extension (``.nt`` ``.nq`` ``.ttl`` ``.trig``
``.rdf``/``.owl``/``.xml``); a further ``.gz``, ``.bz2``, ``.xz`` or ``.zst`` is decompressed
as a stream (:mod:`._archives`). pyoxigraph reads all of them (strictly: ``lenient=False``),
so rdflib is not needed. A file that cannot be opened is a :class:`SourceUnavailableError`;
content that does not parse is an :class:`InputError` with ``file:line`` (when the parser
reports a line) and "fix the line or remove it"; a truncated or damaged archive is an
:class:`InputError` naming the file.
"""

from __future__ import annotations

import contextlib
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any, BinaryIO

from graphmill._atomic import sha256_file
from graphmill.connectors.rdf._archives import COMPRESSIONS, ArchiveError, open_archive
from graphmill.errors import InputError, SourceUnavailableError, SpecError, require
from graphmill.spec import PipelineSpec

FORMAT_NAMES = {
    "n-triples": "N_TRIPLES",
    "n-quads": "N_QUADS",
    "turtle": "TURTLE",
    "trig": "TRIG",
    "rdf-xml": "RDF_XML",
}
EXTENSIONS = {
    ".nt": "n-triples",
    ".nq": "n-quads",
    ".ttl": "turtle",
    ".trig": "trig",
    ".rdf": "rdf-xml",
    ".owl": "rdf-xml",
    ".xml": "rdf-xml",
}


def oxigraph() -> Any:
    """The pyoxigraph module, or a MissingExtraError naming the ``rdf`` extra."""
    return require("pyoxigraph", "rdf")


@dataclass(frozen=True)
class RdfInput:
    """One input file: ``shown`` is the path as the spec wrote it (used in messages)."""

    path: Path
    shown: str
    format: str
    compression: str | None = None  # "gzip", "bzip2", "xz" or "zstd"

    @property
    def gzipped(self) -> bool:
        return self.compression == "gzip"

    @property
    def size(self) -> int:
        """Bytes of the file as stored."""
        return self.path.stat().st_size


def spec_inputs(spec: PipelineSpec) -> list[RdfInput]:
    """The spec's ``source.paths`` with their formats; unreadable paths are refused."""
    declared = spec.source.get("format")
    inputs = []
    for i, shown in enumerate(spec.source["paths"]):
        path = spec.resolve_path(shown)
        suffixes = [s.lower() for s in path.suffixes]
        compression = COMPRESSIONS.get(suffixes[-1]) if suffixes else None
        ext = (suffixes[-2] if len(suffixes) > 1 else "") if compression else (suffixes or [""])[-1]
        fmt = declared or EXTENSIONS.get(ext)
        if fmt is None:
            raise SpecError(
                f"cannot tell the RDF format of {shown!r} from its extension {ext or '(none)'!r}",
                key_path=f"source.paths[{i}]",
                hint=f"set source.format or use one of {', '.join(EXTENSIONS)}",
            )
        check_readable(path, shown)
        inputs.append(RdfInput(path, shown, fmt, compression))
    return inputs


def check_readable(path: Path, shown: str) -> None:
    """Raise SourceUnavailableError unless ``path`` is a file this process can read."""
    try:
        if path.is_dir():
            raise SourceUnavailableError(
                "this is a folder, not an RDF file",
                file=shown,
                hint="name the files in source.paths",
            )
        with open(path, "rb") as fh:
            fh.read(1)
    except FileNotFoundError as exc:
        raise SourceUnavailableError("no such file", file=shown, hint="check source.paths") from exc
    except PermissionError as exc:
        raise SourceUnavailableError(
            "permission denied", file=shown, hint="make the file readable"
        ) from exc
    except OSError as exc:
        raise SourceUnavailableError(
            f"cannot read the file: {exc.strerror or exc}", file=shown
        ) from exc


def syntax_details(exc: SyntaxError) -> tuple[str, int | None, int | None]:
    """(reason, line, column) of a pyoxigraph parser error."""
    text = str(exc.args[0]) if exc.args else str(exc)
    reason = text.split(": ", 1)[1] if text.startswith("Parser error") and ": " in text else text
    position = exc.args[1] if len(exc.args) > 1 and isinstance(exc.args[1], tuple) else ()
    line = exc.lineno if isinstance(exc.lineno, int) else None
    column = position[2] if len(position) > 2 and isinstance(position[2], int) else None
    return reason, line, column


def syntax_error(item: RdfInput, reason: str, line: int | None, column: int | None) -> InputError:
    """The InputError for content of ``item`` that does not parse."""
    if "dot" in reason and column == 1 and line is not None and line > 1:
        # the parser notices a missing final dot at the next statement: name the line
        # that lacks it instead
        line, column = _previous_statement_line(item, line), None
        reason = "the statement lacks its final dot"
    where = f" (column {column})" if column is not None else ""
    return InputError(
        f"not valid {item.format}{where}: {reason}",
        file=item.shown,
        line=line,
        hint="Fix the line or remove it",
    )


def _previous_statement_line(item: RdfInput, line: int) -> int:
    """The last line before ``line`` that holds more than blanks and comments."""
    found = line - 1
    with opened(item) as fh:
        for number, text in enumerate(fh, start=1):
            if number >= line:
                break
            if text.strip() and not text.lstrip().startswith(b"#"):
                found = number
    return found


@contextlib.contextmanager
def reading(item: RdfInput) -> Iterator[None]:
    """Turn parser and I/O errors met while reading ``item`` into graphmill errors."""
    try:
        yield
    except SyntaxError as exc:
        raise syntax_error(item, *syntax_details(exc)) from exc
    except MemoryError as exc:
        if "buffer maximal size" not in str(exc):
            raise
        raise oversized_term(item) from exc
    except (ArchiveError, EOFError) as exc:
        raise InputError(
            f"not a readable {item.compression or 'compressed'} file: {exc}",
            file=item.shown,
            hint="the archive is truncated or damaged: download it again, or test it with "
            "the tool that made it",
        ) from exc
    except UnicodeDecodeError as exc:
        raise InputError(
            f"not UTF-8 text: {exc}", file=item.shown, hint="convert the file to UTF-8"
        ) from exc
    except OSError as exc:
        raise SourceUnavailableError(f"cannot read the file: {exc}", file=item.shown) from exc


#: The longest term (a literal, an IRI) pyoxigraph's parsers take: 16 MiB (measured, 0.5.x).
TERM_LIMIT = 16 << 20


def oversized_term(item: RdfInput) -> InputError:
    """The parser's buffer overflowed: name the first line that is too long, if one is."""
    line = None
    with opened(item) as fh:
        for number, text in enumerate(fh, start=1):
            if len(text) >= TERM_LIMIT:
                line = number
                break
    return InputError(
        f"a term (a literal or an IRI) is longer than the RDF parser's limit of "
        f"{TERM_LIMIT >> 20} MiB",
        file=item.shown,
        line=line,
        hint="shorten or drop that value (keep large documents outside the graph)",
    )


def rdf_format(item: RdfInput) -> Any:
    """The pyoxigraph ``RdfFormat`` of ``item``."""
    return getattr(oxigraph().RdfFormat, FORMAT_NAMES[item.format])


@contextlib.contextmanager
def opened(item: RdfInput, raw: BinaryIO | None = None) -> Iterator[BinaryIO]:
    """``item``'s bytes (read from ``raw`` if given), decompressed as they are read; errors as
    :func:`reading` gives them."""
    with reading(item), open_archive(raw or item.path, item.compression) as handle:
        yield handle


@contextlib.contextmanager
def quads(item: RdfInput, *, position: list[Callable[[], int]] | None = None) -> Iterator[Any]:
    """A streaming pyoxigraph parser over ``item`` (blank node labels kept as written).

    ``position``, a list, receives a function telling how many bytes of the file (as stored,
    compressed or not) have been read so far, for progress reports."""
    ox = oxigraph()
    with contextlib.ExitStack() as stack:
        stack.enter_context(reading(item))
        raw = stack.enter_context(open(item.path, "rb"))
        if position is not None:
            position.append(raw.tell)
        handle = stack.enter_context(opened(item, raw))
        yield ox.parse(handle, format=rdf_format(item), lenient=False)


def file_details(inputs: list[RdfInput], prints: Any = None) -> list[dict[str, Any]]:
    """Publishable facts about the inputs: path as written, format, size, sha256 (taken from
    ``prints``, a :class:`~graphmill.connectors._fingerprints.FileFingerprints`, if given)."""
    return [
        {
            "path": i.shown,
            "format": i.format,
            "bytes": i.path.stat().st_size,
            "sha256": prints.of_file(i.path, i.shown)["sha256"] if prints else sha256_file(i.path),
        }
        for i in inputs
    ]
