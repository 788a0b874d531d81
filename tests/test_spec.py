"""The pipeline spec: schema, error messages with key paths, cross-checks."""

from __future__ import annotations

import copy
from pathlib import Path

import jsonschema
import pytest

from graphmill._schemas import SCHEMA_NAMES, load_schema
from graphmill.errors import ExitCode, SpecError
from graphmill.spec import RelationKey, load_spec, spec_from_dict

MINIMAL = {
    "spec_version": 1,
    "source": {
        "kind": "table-files",
        "vertex_files": [{"path": "people.csv", "id_column": "id", "type": "person"}],
        "edge_files": [
            {"path": "knows.csv", "source_column": "a", "target_column": "b", "relation": "knows"}
        ],
    },
    "vertex_types": {"person": {"properties": {"age": {"kind": "integer"}, "club": None}}},
    "relations": [{"from": "person", "name": "knows", "to": "person", "undirected": True}],
    "features": {"person": [{"property": "age", "encoding": "standardize"}]},
    "label": {"vertex_type": "person", "property": "club"},
    "output": {"bundle": "out/bundle"},
}


def variant(**changes):
    doc = copy.deepcopy(MINIMAL)
    for dotted, value in changes.items():
        node = doc
        *parents, last = dotted.split("__")
        for key in parents:
            node = node[int(key)] if key.isdigit() else node[key]
        node[last] = value
    return doc


@pytest.mark.parametrize("name", SCHEMA_NAMES)
def test_shipped_schemas_are_valid_json_schema(name):
    # JSON Schema draft 2020-12 metaschema check, as jsonschema implements it.
    schema = load_schema(name)
    jsonschema.validators.validator_for(schema).check_schema(schema)


def test_minimal_spec_loads_with_defaults(tmp_path):
    spec = spec_from_dict(MINIMAL, base_dir=tmp_path)
    assert spec.vertex_types["person"].property("age").kind == "integer"
    assert spec.relations[0].key == RelationKey("person", "knows", "person")
    assert spec.relations[0].match == "knows"
    assert spec.output.bundle == tmp_path / "out/bundle"
    assert spec.output.snapshot == Path(f"{tmp_path / 'out/bundle'}.snapshot")
    assert spec.split.method == "stratified"
    assert spec.edges.duplicates == "drop"


def test_typo_in_a_key_names_the_path_and_suggests(tmp_path, write):
    text = (
        "spec_version: 1\n"
        "source: {kind: table-files, vertex_files: [{path: a.csv, id_column: id, type: t}]}\n"
        "vertex_types: {t: {}}\n"
        "outptu: {bundle: out}\n"
    )
    path = write("spec.yaml", text)
    with pytest.raises(SpecError) as info:
        load_spec(path)
    message = info.value.one_line()
    assert str(path) in message
    assert "'outptu'" in message and "did you mean 'output'" in message
    assert info.value.exit_code == ExitCode.BAD_INPUT
    assert "\n" not in message


@pytest.mark.parametrize(
    ("changes", "path_fragment", "words"),
    [
        ({"source__vertex_files__0__id_colum": "x"}, "source.vertex_files[0]", "id_colum"),
        ({"edges": {"duplicates": "squash"}}, "edges.duplicates", "'squash' is not one of"),
        ({"vertex_types": {"9bad": {}}}, "vertex_types", "9bad"),
        ({"relations__0__to": "robot"}, "relations[0].to", "undeclared vertex type 'robot'"),
        ({"label": {"vertex_type": "person", "property": "nope"}}, "label.property", "nope"),
        ({"split": {"fractions": {"train": 0.5, "test": 0.2}}}, "split.fractions", "add up"),
        ({"source__kind": "rdf-file"}, "source", "paths"),
    ],
)
def test_bad_specs_name_key_path(tmp_path, changes, path_fragment, words):
    with pytest.raises(SpecError) as info:
        spec_from_dict(variant(**changes), base_dir=tmp_path, spec_file=tmp_path / "s.yaml")
    assert path_fragment in info.value.one_line()
    assert words in info.value.one_line()


def test_yaml_syntax_error_gives_line(write):
    path = write("spec.yaml", "spec_version: 1\nsource: [unclosed\n")
    with pytest.raises(SpecError) as info:
        load_spec(path)
    assert info.value.line is not None
    assert f"{path}:" in info.value.one_line()


def test_missing_spec_file(tmp_path):
    with pytest.raises(SpecError, match="not found"):
        load_spec(tmp_path / "absent.yaml")


def test_prefixed_names_expand_and_undeclared_prefix_is_refused(tmp_path):
    doc = {
        "spec_version": 1,
        "source": {"kind": "rdf-file", "paths": ["g.nt"]},
        "rdf": {"prefixes": {"ex": "http://example.org/"}},
        "vertex_types": {"thing": {"match": "ex:Thing", "properties": {"n": {"from": "ex:n"}}}},
        "output": {"bundle": "b"},
    }
    spec = spec_from_dict(doc, base_dir=tmp_path)
    assert spec.rdf.expand("ex:Thing") == "http://example.org/Thing"
    assert spec.rdf.expand("<urn:x:y>") == "urn:x:y"
    doc["vertex_types"]["thing"]["match"] = "zz:Thing"
    with pytest.raises(SpecError, match="prefix 'zz' is not declared"):
        spec_from_dict(doc, base_dir=tmp_path)
