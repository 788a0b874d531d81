"""One exception tree for graphmill, with the CLI exit code each kind maps to.

Every error carries structured context (file, line, record, key path, source) and renders
as one line: ``<where>: <what>. <what to do>``. Driver and library errors are turned into
these by :func:`map_exceptions`, so no traceback reaches a user.
"""

from __future__ import annotations

import contextlib
import reprlib
from collections.abc import Iterator
from enum import IntEnum
from typing import Any


class ExitCode(IntEnum):
    """Documented exit codes of the ``graphmill`` command."""

    OK = 0
    CHECKS_FAILED = 1
    BAD_INPUT = 2
    SOURCE_UNREADABLE = 3
    AUTH_REFUSED = 4
    SOURCE_TIMEOUT = 5
    SOURCE_SERVER_ERROR = 6
    MALFORMED_RESPONSE = 7
    BUNDLE_CORRUPT = 8
    MISSING_EXTRA = 9
    INTERNAL = 70


class GraphmillError(Exception):
    """Base of every error graphmill raises on purpose."""

    exit_code: ExitCode = ExitCode.INTERNAL

    def __init__(
        self,
        message: str,
        *,
        hint: str | None = None,
        file: str | None = None,
        line: int | None = None,
        record: str | None = None,
        key_path: str | None = None,
        source: str | None = None,
    ) -> None:
        super().__init__(message)
        self.message = message
        self.hint = hint
        self.file = file
        self.line = line
        self.record = record
        self.key_path = key_path
        self.source = source

    @property
    def location(self) -> str:
        """Where the problem is, as ``file:line``, ``key path`` or ``source``; may be empty."""
        parts: list[str] = []
        if self.source:
            parts.append(self.source)
        if self.file:
            parts.append(self.file if self.line is None else f"{self.file}:{self.line}")
        elif self.line is not None:
            parts.append(f"line {self.line}")
        if self.key_path:  # a key path built from a huge key stays short too
            path = self.key_path
            parts.append(path if len(path) <= 120 else path[:119] + "…")
        if self.record:
            parts.append(f"record {self.record}")
        return ", ".join(parts)

    def one_line(self) -> str:
        """The message as one line: location, problem, advice."""
        text = _sentence(self.message)
        where = self.location
        out = f"{where}: {text}" if where else text
        if self.hint:
            out += f" {_sentence(self.hint)}"
        return " ".join(out.split())

    def to_dict(self) -> dict[str, Any]:
        """Machine-readable form for ``--json`` output."""
        return {
            "error": type(self).__name__,
            "exit_code": int(self.exit_code),
            "message": self.message,
            "hint": self.hint,
            "file": self.file,
            "line": self.line,
            "record": self.record,
            "key_path": self.key_path,
            "source": self.source,
        }

    def __str__(self) -> str:
        return self.one_line()


#: The longest a quoted value may be in a message, in characters, before it is cut.
QUOTE_LIMIT = 80


def quote_value(value: Any, limit: int = QUOTE_LIMIT) -> str:
    """``repr(value)`` for a message, cut to about ``limit`` characters with an ellipsis.

    Long strings are cut before ``repr`` so that a 5 MB value costs no 5 MB copy.

    >>> quote_value("abc")
    "'abc'"
    >>> quote_value("x" * 100, limit=10)
    "'xxxxxxxxx…'"
    """
    if isinstance(value, str | bytes) and len(value) > limit:
        cut = value[: limit - 1]
        return repr(cut)[:-1] + "…" + repr(cut)[-1]
    text = repr(value) if not isinstance(value, dict | list | tuple) else _short_repr(value, limit)
    return text if len(text) <= limit else text[: limit - 1] + "…"


def _short_repr(value: Any, limit: int) -> str:
    """repr of a container without rendering more than about ``limit`` characters of it."""
    shortener = reprlib.Repr()
    shortener.maxstring = shortener.maxother = limit
    shortener.maxlevel = 3
    return shortener.repr(value)


def _sentence(text: str) -> str:
    """``text`` ending in one full stop (or its own question mark)."""
    text = text.rstrip(".")
    return text if text.endswith(("?", "!")) else f"{text}."


class SpecError(GraphmillError):
    """The pipeline spec is missing, not YAML, or does not match its schema."""

    exit_code = ExitCode.BAD_INPUT


class InputError(GraphmillError):
    """Graph data that cannot be parsed or lacks what the spec declares (a column, a type)."""

    exit_code = ExitCode.BAD_INPUT


class SourceUnavailableError(GraphmillError):
    """The source cannot be read at all: missing file, refused connection, unknown host."""

    exit_code = ExitCode.SOURCE_UNREADABLE


class AuthenticationError(SourceUnavailableError):
    """The server refused the credentials (or none were given where some are needed)."""

    exit_code = ExitCode.AUTH_REFUSED


class SourceTimeoutError(SourceUnavailableError):
    """The server gave up on a request (for example Gremlin status 598) or did not answer."""

    exit_code = ExitCode.SOURCE_TIMEOUT


class SourceServerError(SourceUnavailableError):
    """The server answered with an error of its own (HTTP 5xx, Gremlin 5xx status)."""

    exit_code = ExitCode.SOURCE_SERVER_ERROR


class MalformedResponseError(SourceUnavailableError):
    """The server answered, but the document cannot be parsed as what was asked for."""

    exit_code = ExitCode.MALFORMED_RESPONSE


class BundleIntegrityError(GraphmillError):
    """A bundle or snapshot file is missing or its sha256 differs from the manifest."""

    exit_code = ExitCode.BUNDLE_CORRUPT


class MissingExtraError(GraphmillError):
    """An optional dependency is not installed."""

    exit_code = ExitCode.MISSING_EXTRA


@contextlib.contextmanager
def map_exceptions(
    mapping: dict[type[BaseException], type[GraphmillError]], **context: Any
) -> Iterator[None]:
    """Re-raise the first matching library exception as a graphmill error with ``context``.

    >>> with contextlib.suppress(InputError):
    ...     with map_exceptions({ValueError: InputError}, file="a.csv"):
    ...         raise ValueError("bad number")
    """
    try:
        yield
    except GraphmillError:
        raise
    except BaseException as exc:
        for library_type, ours in mapping.items():
            if isinstance(exc, library_type):
                raise ours(str(exc) or type(exc).__name__, **context) from exc
        raise


def require(module: str, extra: str) -> Any:
    """Import an optional dependency, or raise :class:`MissingExtraError` naming the extra."""
    import importlib

    try:
        return importlib.import_module(module)
    except ImportError as exc:
        raise MissingExtraError(
            f"the Python package {module!r} is not installed",
            hint=f"install it with: pip install 'graphmill[{extra}]'",
        ) from exc
