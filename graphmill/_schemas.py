"""The JSON Schemas shipped in ``graphmill/schemas/`` and their validators."""

from __future__ import annotations

import json
from functools import cache
from importlib import resources
from typing import Any

import jsonschema

SCHEMA_NAMES = ("spec", "report", "manifest", "snapshot", "comparison")


@cache
def load_schema(name: str) -> dict[str, Any]:
    """The parsed schema ``<name>.schema.json``."""
    text = resources.files("graphmill.schemas").joinpath(f"{name}.schema.json").read_text("utf-8")
    return json.loads(text)


@cache
def schema_validator(name: str) -> jsonschema.protocols.Validator:
    schema = load_schema(name)
    cls = jsonschema.validators.validator_for(schema)
    return cls(schema, format_checker=cls.FORMAT_CHECKER)


def validate_document(name: str, document: Any) -> None:
    """Raise ``jsonschema.ValidationError`` if ``document`` does not match schema ``name``."""
    schema_validator(name).validate(document)
