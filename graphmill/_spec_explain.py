"""Schema errors of a spec, explained: one :class:`SpecError` with the right key path.

Contract: :func:`check_against_schema` validates a parsed spec against
``schemas/spec.schema.json`` and raises the most useful error as one short line: an unknown
key (with a did-you-mean), else the deepest error, descending into ``oneOf``/``anyOf``
branches. Misspelt enum values get a did-you-mean too; a boolean where a word was expected
gets the YAML 1.1 hint (a bare ``yes``/``no``/``on``/``off`` is a boolean). Every quoted value
is capped by :func:`~graphmill.errors.quote_value`.
"""

from __future__ import annotations

import difflib
from typing import Any

from graphmill._schemas import load_schema, schema_validator
from graphmill.errors import SpecError, quote_value

#: Words longer than this get no did-you-mean (comparing a huge value costs time, helps no one).
GUESS_LIMIT = 200

YAML_BOOLEAN_HINT = (
    "YAML reads a bare yes, no, on, off, true or false as a boolean: put the word in quotes"
)

_TYPE_WORDS = {
    "object": "a mapping",
    "array": "a list",
    "string": "a string",
    "integer": "an integer",
    "number": "a number",
    "boolean": "true or false",
    "null": "empty",
}


def key_path(parts: Any) -> str:
    """``source.vertex_files[1].id_column`` from ``["source", "vertex_files", 1, "id_column"]``."""
    out = ""
    for part in parts:
        out += f"[{part}]" if isinstance(part, int) else (f".{part}" if out else str(part))
    return out or "(top level)"


def did_you_mean(word: Any, choices: Any) -> str:
    """``"; did you mean 'x'?"`` for the closest of ``choices``, or ``""``."""
    if not isinstance(word, str) or len(word) > GUESS_LIMIT:
        return ""
    close = difflib.get_close_matches(word, [str(c) for c in choices], n=1, cutoff=0.6)
    return f"; did you mean {close[0]!r}?" if close else ""


def listed(choices: Any, limit: int = 300) -> str:
    """``'a', 'b', 'c'``, cut at about ``limit`` characters."""
    text = ", ".join(map(repr, choices))
    return text if len(text) <= limit else text[: limit - 1] + "…"


def check_against_schema(document: Any, where: str | None) -> None:
    """Raise :class:`SpecError` for the most useful schema error of ``document``, if any."""
    if not isinstance(document, dict):
        raise SpecError(
            f"the spec must be a YAML mapping at the top level, not {_kind_of(document)}",
            file=where,
            hint="start from examples/lending_coop/spec.yaml",
        )
    errors = list(schema_validator("spec").iter_errors(document))
    errors = [e for e in errors if not _spurious(e)]
    if not errors:
        return
    error = _most_useful(errors)
    message, path, hint = _explain(error)
    raise SpecError(message, file=where, key_path=key_path(path), hint=hint)


def _most_useful(errors: list[Any]) -> Any:
    """Prefer an unknown key (the shallowest), then the deepest error; descend into
    ``oneOf``/``anyOf``, following the branch whose type fits the value."""
    errors = [e for e in errors if not _spurious(e)] or errors
    unknown = [
        e for e in errors if e.validator in ("additionalProperties", "unevaluatedProperties")
    ]
    if unknown:
        return min(unknown, key=lambda e: len(e.absolute_path))
    best = max(errors, key=lambda e: len(e.absolute_path))
    if not best.context or _exactly_one_of_keys(best) or _all_shallow(best):
        return best
    depth = len(best.absolute_path)
    fitting = [
        e
        for e in best.context
        if not (e.validator in ("type", "enum", "const") and len(e.absolute_path) == depth)
    ]
    return _most_useful(fitting or list(best.context))


def _all_shallow(error: Any) -> bool:
    """Every branch failed on the value itself (its type or enum), not inside it."""
    return all(
        len(e.absolute_path) == len(error.absolute_path)
        and e.validator in ("type", "enum", "const")
        for e in error.context
    )


def _exactly_one_of_keys(error: Any) -> bool:
    """A ``oneOf`` whose branches each only require one key (``type`` / ``type_column``)."""
    return error.validator == "oneOf" and all(
        set(branch) == {"required"} and len(branch["required"]) == 1
        for branch in error.validator_value
    )


def _spurious(error: Any) -> bool:
    """An ``unevaluatedProperties`` error that names only keys the schema does know: it
    follows from another error in the same mapping (a failed ``allOf`` evaluates nothing)."""
    if error.validator != "unevaluatedProperties" or not isinstance(error.instance, dict):
        return False
    return not _unknown_keys(error)


def _known_keys(schema: dict[str, Any]) -> set[str]:
    keys = set(schema.get("properties", {}))
    for part in schema.get("allOf", []):
        keys |= _known_keys(_resolve(part))
    return keys


def _resolve(schema: dict[str, Any]) -> dict[str, Any]:
    ref = schema.get("$ref")
    if not ref:
        return schema
    node: Any = load_schema("spec")
    for part in ref.removeprefix("#/").split("/"):
        node = node[part]
    return _resolve(node)


def _unknown_keys(error: Any) -> list[Any]:
    known = _known_keys(error.schema)
    return [k for k in error.instance if k not in known]


def _explain(error: Any) -> tuple[str, list[Any], str | None]:
    """(message, key path parts, hint) for one schema error."""
    path = list(error.absolute_path)
    value = error.instance
    hint = YAML_BOOLEAN_HINT if isinstance(value, bool) else None
    if "propertyNames" in error.absolute_schema_path:
        return _explain_key_name(error, path)
    kind = error.validator
    if kind in ("additionalProperties", "unevaluatedProperties"):
        allowed = sorted(_known_keys(error.schema))
        bad = (_unknown_keys(error) or ["?"])[0]
        if not isinstance(bad, str):
            return (f"the key {quote_value(bad)} is not text", path, YAML_BOOLEAN_HINT)
        guess = did_you_mean(bad, allowed)
        return (
            f"unknown key {quote_value(bad)}{guess} (expected one of: {', '.join(allowed)})",
            [*path, bad] if len(bad) <= 80 else path,
            None,
        )
    if kind == "required":
        missing = error.message.split("'")[1] if "'" in error.message else "?"
        about = error.schema.get("properties", {}).get(missing, {})
        what = about.get("description") if isinstance(about, dict) else None
        more = f" ({what.rstrip('.')})" if what and len(what) < 160 else ""
        return (f"missing required key {missing!r}{more}", [*path, missing], None)
    if _exactly_one_of_keys(error):
        names = [branch["required"][0] for branch in error.validator_value]
        present = [n for n in names if isinstance(value, dict) and n in value]
        said = "both are given" if present else "neither is given"
        return (f"give exactly one of {' or '.join(map(repr, names))}; {said}", path, None)
    if kind in ("oneOf", "anyOf"):
        branches = [_resolve(b) for b in error.validator_value]
        options = " or ".join(_expected(b) for b in branches)
        words = [c for b in branches for c in b.get("enum", []) if isinstance(c, str)]
        return (f"{quote_value(value)} is not {options}{did_you_mean(value, words)}", path, hint)
    if kind == "enum":
        choices = [c for c in error.validator_value if isinstance(c, str)]
        guess = did_you_mean(value, choices)
        return (f"{quote_value(value)} is not one of {listed(choices)}{guess}", path, hint)
    if kind == "const":
        return (f"{quote_value(value)} is not {error.validator_value!r}", path, hint)
    if kind == "type":
        wanted = error.validator_value
        words = [wanted] if isinstance(wanted, str) else list(wanted)
        expected = " or ".join(_TYPE_WORDS.get(w, w) for w in words)
        return (
            f"{quote_value(value)} is not {expected}",
            path,
            hint if "string" in words else None,
        )
    if kind == "pattern":
        expected = error.schema.get("description", error.validator_value)
        if len(str(expected)) > 200:
            expected = str(expected)[:199] + "…"
        return (f"{quote_value(value)} does not have the expected form ({expected})", path, hint)
    if kind in ("minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum"):
        bound = {
            "minimum": "at least",
            "maximum": "at most",
            "exclusiveMinimum": "above",
            "exclusiveMaximum": "below",
        }[kind]
        return (
            f"{quote_value(value)} is out of range: it must be {bound} {error.validator_value}",
            path,
            None,
        )
    if kind in ("minLength", "maxLength", "minItems", "maxItems", "minProperties"):
        return (_size_message(kind, error.validator_value, value), path, None)
    text = error.message
    return (text if len(text) <= 200 else text[:199] + "…", path, hint)


def _explain_key_name(error: Any, path: list[Any]) -> tuple[str, list[Any], str | None]:
    """A mapping key that is not an allowed name (its own path is the key)."""
    name = error.instance
    where = [*path, name] if isinstance(name, str) and len(name) <= 80 else path
    if not isinstance(name, str):
        return (f"the key {quote_value(name)} is not text", path, YAML_BOOLEAN_HINT)
    if error.validator == "not":
        return (
            f"{quote_value(name)} is a reserved column name",
            where,
            "rename the property; vertex_id, source_id and target_id are taken",
        )
    described = error.schema.get("description") or error.validator_value
    return (
        f"the key {quote_value(name)} does not have the expected form ({described})",
        where,
        None,
    )


def _size_message(kind: str, bound: int, value: Any) -> str:
    if kind == "minLength":
        return "the value is empty" if bound == 1 else f"the value is shorter than {bound}"
    if kind == "maxLength":
        return f"{quote_value(value)} is longer than {bound} character{'s' * (bound != 1)}"
    if kind == "minItems":
        return f"the list needs at least {bound} item{'s' * (bound != 1)}"
    if kind == "maxItems":
        return f"the list holds more than {bound} items"
    return f"the mapping needs at least {bound} key{'s' * (bound != 1)}"


def _expected(schema: dict[str, Any]) -> str:
    """A few words for what a (sub)schema accepts."""
    if "enum" in schema:
        return f"one of {listed([c for c in schema['enum'] if isinstance(c, str)])}"
    if "const" in schema:
        return repr(schema["const"])
    wanted = schema.get("type", "object")
    words = [wanted] if isinstance(wanted, str) else list(wanted)
    return " or ".join(_TYPE_WORDS.get(w, w) for w in words)


def _kind_of(value: Any) -> str:
    if value is None:
        return "empty"
    name = {
        dict: "object",
        list: "array",
        str: "string",
        bool: "boolean",
        int: "integer",
        float: "number",
    }.get(type(value), type(value).__name__)
    return _TYPE_WORDS.get(name, name)
