"""Reading a spec file: bytes to UTF-8 text to a YAML document, every failure a SpecError.

Contract: :func:`read_spec_document` returns the parsed document of a UTF-8 file (a leading
byte-order mark is dropped). A missing or unreadable file, bytes that are not UTF-8 (with the
byte offset and line), YAML that does not parse (with the line), a key given twice in one
mapping (both lines; YAML would silently keep the last), aliases that expand to a huge
document and nesting too deep to parse all raise :class:`~graphmill.errors.SpecError`
(exit 2) naming the file.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import yaml

from graphmill.errors import SpecError, quote_value

UTF8_BOM = b"\xef\xbb\xbf"


#: The most nodes a spec may expand to once YAML aliases are followed (a spec has hundreds;
#: a few nested aliases can otherwise expand to billions and hang every later step).
MAX_EXPANDED_NODES = 1_000_000


class _Loader(yaml.SafeLoader):
    """PyYAML's safe loader, refusing a key given twice in one mapping and documents whose
    aliases expand beyond :data:`MAX_EXPANDED_NODES` nodes."""

    def construct_document(self, node: Any) -> Any:
        if _expanded_size(node, {}) > MAX_EXPANDED_NODES:
            raise _TooLarge(node.start_mark.line + 1)
        return super().construct_document(node)

    def construct_mapping(self, node: Any, deep: bool = False) -> Any:
        seen: dict[Any, int] = {}
        for key_node, _ in node.value:
            if key_node.tag == "tag:yaml.org,2002:merge":  # '<<' merges; later keys win
                continue
            key = self.construct_object(key_node, deep=True)
            line = key_node.start_mark.line + 1
            if isinstance(key, str | int | float | bool) and key in seen:
                raise _DuplicateKey(key, seen[key], line)
            if isinstance(key, str | int | float | bool):
                seen[key] = line
        return super().construct_mapping(node, deep=deep)


def _expanded_size(node: Any, memo: dict[int, int]) -> int:
    """Nodes under ``node`` with every alias expanded (memoised: linear in the document)."""
    if id(node) in memo:
        return memo[id(node)]
    memo[id(node)] = 1  # a recursive alias counts once instead of looping
    if isinstance(node, yaml.MappingNode):
        size = 1 + sum(_expanded_size(k, memo) + _expanded_size(v, memo) for k, v in node.value)
    elif isinstance(node, yaml.SequenceNode):
        size = 1 + sum(_expanded_size(item, memo) for item in node.value)
    else:
        size = 1
    memo[id(node)] = size
    return size


class _TooLarge(Exception):  # noqa: N818 - internal signal, turned into SpecError
    def __init__(self, line: int) -> None:
        super().__init__(line)
        self.line = line


class _DuplicateKey(Exception):  # noqa: N818 - internal signal, turned into SpecError
    def __init__(self, key: Any, first: int, again: int) -> None:
        super().__init__(key)
        self.key, self.first, self.again = key, first, again


def read_spec_document(file: Path) -> Any:
    """The parsed YAML document of ``file``; :class:`SpecError` for anything unreadable."""
    where = str(file)
    try:
        data = file.read_bytes()
    except FileNotFoundError as exc:
        raise SpecError("spec file not found", file=where, hint="check the path") from exc
    except OSError as exc:
        raise SpecError(f"cannot read the spec: {exc.strerror or exc}", file=where) from exc
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        start = exc.start + (len(UTF8_BOM) if data.startswith(UTF8_BOM) else 0)
        utf16 = data.startswith((b"\xff\xfe", b"\xfe\xff"))
        raise SpecError(
            f"the spec is not UTF-8 text: byte {start} (0x{data[start]:02x}) is not valid UTF-8"
            + (" (the file starts with a UTF-16 byte-order mark)" if utf16 else ""),
            file=where,
            line=data.count(b"\n", 0, start) + 1,
            hint="save the spec as UTF-8",
        ) from None
    return parse_yaml(text, where)


def parse_yaml(text: str, where: str | None = None) -> Any:
    """``text`` parsed as YAML 1.1 (safe types only); :class:`SpecError` with the line."""
    try:
        return yaml.load(text, Loader=_Loader)  # a SafeLoader subclass: safe types only
    except _DuplicateKey as dup:
        raise SpecError(
            f"the key {quote_value(dup.key)} is given twice in one mapping (first on line "
            f"{dup.first}); YAML would keep only the last",
            file=where,
            line=dup.again,
            hint="remove or merge one of them",
        ) from None
    except _TooLarge as big:
        raise SpecError(
            f"the YAML expands to more than {MAX_EXPANDED_NODES:,} values once its aliases "
            "(*name) are followed",
            file=where,
            line=big.line,
            hint="use fewer nested aliases",
        ) from None
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None) or getattr(exc, "context_mark", None)
        problem = str(getattr(exc, "problem", None) or exc).split("\n")[0]
        raise SpecError(
            f"not valid YAML: {problem[:200]}",
            file=where,
            line=(mark.line + 1) if mark is not None else None,
        ) from None
    except RecursionError:
        raise SpecError(
            "the YAML is nested too deeply to read", file=where, hint="flatten the spec"
        ) from None
