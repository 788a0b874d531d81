"""The pipeline spec: schema, error messages with key paths, cross-checks."""

from __future__ import annotations

import copy
from pathlib import Path

import jsonschema
import pytest
import yaml

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
        node[int(last) if last.isdigit() else last] = value
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


# --- checks at load: every cross-reference and value, with the right key path -----------------


def refused(doc, tmp_path):
    """The SpecError spec_from_dict raises for ``doc``, as one line."""
    with pytest.raises(SpecError) as info:
        spec_from_dict(doc, base_dir=tmp_path, spec_file=tmp_path / "s.yaml")
    line = info.value.one_line()
    assert "\n" not in line and str(tmp_path / "s.yaml") in line
    assert info.value.exit_code == ExitCode.BAD_INPUT
    return info.value, line


def with_features(*items, vertex_type="person"):
    return variant(features={vertex_type: list(items)})


@pytest.mark.parametrize(
    ("doc", "key_path", "words"),
    [
        (variant(source__kind="tabel-files"), "source.kind", "did you mean 'table-files'?"),
        (
            variant(source__vertex_files__0__type="persn"),
            "source.vertex_files[0].type",
            "did you mean 'person'?",
        ),
        (
            variant(source__edge_files__0__relation="knws"),
            "source.edge_files[0].relation",
            "did you mean 'knows'?",
        ),
        (variant(relations__0__to="persno"), "relations[0].to", "did you mean 'person'?"),
        (
            variant(vertex_types__person__properties__age={"kind": "integer", "min": 9, "max": 1}),
            "vertex_types.person.properties.age.min",
            "min 9 is above max 1",
        ),
        (
            variant(vertex_types__person__properties__club={"kind": "string", "max": 3}),
            "vertex_types.person.properties.club.max",
            "apply to numbers",
        ),
        (
            variant(checks={"severity": {"dangling-edg": "error"}}),
            "checks.severity.dangling-edg",
            "did you mean 'dangling-edge'?",
        ),
        (
            variant(checks={"expect": {"relations": {"person.knws.person": {}}}}),
            "checks.expect.relations.person.knws.person",
            "did you mean 'person.knows.person'?",
        ),
        (
            variant(checks={"expect": {"vertex_types": {"persn": {"min": 1}}}}),
            "checks.expect.vertex_types.persn",
            "did you mean 'person'?",
        ),
        (
            variant(checks={"expect": {"properties": {"person": ["age", "agee"]}}}),
            "checks.expect.properties.person[1]",
            "did you mean 'age'?",
        ),
        (
            variant(checks={"expect": {"vertex_types": {"person": {"min": 5, "max": 2}}}}),
            "checks.expect.vertex_types.person.min",
            "min 5 is above max 2",
        ),
        (
            variant(
                checks={"expect": {"relations": {"person.knows.person": {"min": 3, "max": 0}}}}
            ),
            "checks.expect.relations.person.knows.person.min",
            "min 3 is above max 0",
        ),
        (
            with_features({"property": "club", "encoding": "one-hot"}),
            "features.person[0].property",
            "target leakage",
        ),
        (
            with_features(
                {"property": "age", "encoding": "standardize"},
                {"property": "aeg", "encoding": "log"},
            ),
            "features.person[1].property",
            "did you mean 'age'?",
        ),
        (
            with_features({"property": "age", "encoding": "datetime"}),
            "features.person[0].encoding",
            "cannot apply to 'age', declared kind 'integer'",
        ),
        (with_features(vertex_type="persn"), "features.persn", "did you mean 'person'?"),
        (
            variant(label={"vertex_type": "persn", "property": "club"}),
            "label.vertex_type",
            "'person'",
        ),
        (variant(label={"vertex_type": "person", "property": "clb"}), "label.property", "'club'"),
        (variant(edges={"duplicates": "dorp"}), "edges.duplicates", "did you mean 'drop'?"),
        (
            with_features({"property": "age", "encoding": "one-hto"}),
            "features.person[0].encoding",
            "did you mean 'one-hot'?",
        ),
        (
            variant(split={"fractions": {"train": 0.5, "validation": float("nan"), "test": 0.5}}),
            "split.fractions.validation",
            "NaN",
        ),
        (
            variant(split={"fractions": {"train": 0.9, "test": -0.1}}),
            "split.fractions.test",
            "-0.1 is out of range: it must be at least 0",
        ),
        (
            variant(source__vertex_files__0__delimiter="\n"),
            "source.vertex_files[0].delimiter",
            "quote",
        ),
        (
            variant(source__vertex_files__0__delimiter='"'),
            "source.vertex_files[0].delimiter",
            "quote",
        ),
        (
            variant(source__edge_files__0__delimiter="\r"),
            "source.edge_files[0].delimiter",
            "carriage return",
        ),
        (
            variant(source__vertex_files__0__id_column=""),
            "source.vertex_files[0].id_column",
            "empty",
        ),
        (variant(edges={"add_reverse": "yes"}), "edges.add_reverse", "not true or false"),
        (variant(edges={"self_loops": False}), "edges.self_loops", "YAML reads a bare"),
    ],
)
def test_checks_at_load_name_the_key_path(tmp_path, doc, key_path, words):
    error, line = refused(doc, tmp_path)
    assert error.key_path == key_path, line
    assert words in line


def test_missing_source_kind_names_source_kind(tmp_path):
    doc = variant()
    del doc["source"]["kind"]
    error, line = refused(doc, tmp_path)
    assert error.key_path == "source.kind"
    assert "missing required key 'kind'" in line and "table-files" in line


def test_an_error_inside_one_table_file_names_that_entry(tmp_path):
    doc = variant()
    doc["source"]["vertex_files"].append({"path": "b.csv", "id_column": 7, "type": "person"})
    error, _ = refused(doc, tmp_path)
    assert error.key_path == "source.vertex_files[1].id_column"
    doc = variant(source__vertex_files__0__delimiter="ab")  # not "unknown key 'path'"
    error, line = refused(doc, tmp_path)
    assert error.key_path == "source.vertex_files[0].delimiter" and "unknown key" not in line
    doc = variant()
    doc["source"]["vertex_files"][0]["type_column"] = "kind"
    error, line = refused(doc, tmp_path)
    assert error.key_path == "source.vertex_files[0]"
    assert "exactly one of 'type' or 'type_column'; both are given" in line


def test_one_of_descends_to_the_useful_branch(tmp_path):
    doc = variant(vertex_types__person__properties__age={"kind": "integer", "frm": "x"})
    error, line = refused(doc, tmp_path)
    assert error.key_path == "vertex_types.person.properties.age.frm"
    assert "did you mean 'from'?" in line
    doc = variant(rdf={"graphs": "unoin"})
    error, line = refused(doc, tmp_path)
    assert error.key_path == "rdf.graphs" and "did you mean 'union'?" in line
    error, line = refused(variant(rdf={"graphs": []}), tmp_path)
    assert error.key_path == "rdf.graphs" and "at least 1 item" in line


def test_encoding_and_feature_options_that_cannot_apply(tmp_path):
    doc = variant(vertex_types__person__properties__tags={"kind": "string", "multi": True})
    doc["features"] = {"person": [{"property": "tags", "encoding": "one-hot"}]}
    error, line = refused(doc, tmp_path)
    assert error.key_path == "features.person[0].encoding" and "multi-hot" in line
    doc = with_features({"property": "age", "encoding": "standardize", "max_categories": 3})
    error, _ = refused(doc, tmp_path)
    assert error.key_path == "features.person[0].max_categories"
    doc = with_features(
        {"property": "age", "encoding": "log"}, {"property": "age", "encoding": "log"}
    )
    error, _ = refused(doc, tmp_path)
    assert error.key_path == "features.person[1]"


def test_unquoted_off_is_the_severity_off(write):
    # PyYAML reads YAML 1.1, where a bare off is the boolean false (YAML 1.1 spec, bool type)
    text = yaml.safe_dump(MINIMAL, sort_keys=False) + "checks:\n  severity: {self-loop: off}\n"
    assert yaml.safe_load(text)["checks"]["severity"]["self-loop"] is False
    spec = load_spec(write("spec.yaml", text))
    assert spec.checks.severity == {"self-loop": "off"}


def test_other_bare_yaml_booleans_are_explained(tmp_path):
    error, line = refused(variant(checks={"severity": {"self-loop": True}}), tmp_path)
    assert error.key_path == "checks.severity.self-loop"
    assert "YAML reads a bare yes, no, on, off" in line


def test_quoted_values_are_capped(tmp_path, write):
    huge = "x" * 5_000_000
    for doc in (
        variant(edges={"duplicates": huge}),
        variant(source__kind=huge),
        variant(vertex_types={**MINIMAL["vertex_types"], huge: {}}),
        variant(label={"vertex_type": "person", "property": "club", huge: 1}),
    ):
        _, line = refused(doc, tmp_path)
        assert len(line) < 600 and "…" in line
    path = write("spec.yaml", f"spec_version: 1\nname: {huge}\n")
    with pytest.raises(SpecError) as info:
        load_spec(path)
    assert len(info.value.one_line()) < 600


def test_a_spec_that_is_not_utf8_names_the_byte_and_line(tmp_path):
    path = tmp_path / "spec.yaml"
    path.write_bytes(b"spec_version: 1\nname: caf\xe9\n")
    with pytest.raises(SpecError) as info:
        load_spec(path)
    assert info.value.exit_code == ExitCode.BAD_INPUT
    assert info.value.line == 2 and "byte 25" in info.value.one_line()
    path.write_bytes("spec_version: 1\n".encode("utf-16"))
    with pytest.raises(SpecError, match="not UTF-8"):
        load_spec(path)


def test_a_byte_order_mark_is_allowed(tmp_path):
    path = tmp_path / "spec.yaml"
    path.write_bytes(b"\xef\xbb\xbf" + yaml.safe_dump(MINIMAL).encode())
    assert load_spec(path).vertex_types["person"].property("age").kind == "integer"


def test_a_folder_or_a_deeply_nested_spec_is_a_spec_error(tmp_path, write):
    with pytest.raises(SpecError, match="cannot read the spec"):
        load_spec(tmp_path)
    with pytest.raises(SpecError, match="nested too deeply"):
        load_spec(write("deep.yaml", "name: " + "[" * 5000 + "]" * 5000 + "\n"))


def test_names_declared_elsewhere_check_in_any_order(tmp_path):
    # a third-party kind is not known here: it is refused with the list of kinds
    error, line = refused(variant(source={"kind": "my-graph-db"}), tmp_path)
    assert error.key_path == "source.kind" and "table-files" in line
    spec = spec_from_dict(variant(edges={"add_reverse": True}), base_dir=tmp_path)
    assert spec.edges.add_reverse


def test_a_key_given_twice_is_refused_with_both_lines(write):
    text = "spec_version: 1\nname: a\nvertex_types: {}\nname: b\n"
    with pytest.raises(SpecError) as info:
        load_spec(write("spec.yaml", text))
    assert info.value.line == 4 and "first on line 2" in info.value.one_line()
    # YAML merge keys ('<<') are not repeats: the explicit key wins, as YAML says
    merged = yaml.safe_dump(MINIMAL) + "rdf: {<<: {several_types: reject}, languages: [en]}\n"
    spec = load_spec(write("merged.yaml", merged))
    assert spec.rdf.several_types == "reject"


def test_aliases_that_expand_to_a_huge_document_are_refused_at_once(write):
    # nine levels of ten aliases each: 10**9 values once expanded ("billion laughs")
    lines = ["a0: &a0 [x, x, x, x, x, x, x, x, x, x]"]
    lines += [f"a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 10) + "]" for i in range(1, 10)]
    with pytest.raises(SpecError, match="expands to more than"):
        load_spec(write("spec.yaml", "\n".join(lines) + "\n"))


def test_rows_told_apart_by_a_column_need_distinct_match_values(tmp_path):
    doc = variant()
    doc["source"]["edge_files"][0] = {
        "path": "e.csv",
        "source_column": "a",
        "target_column": "b",
        "relation_column": "rel",
    }
    doc["relations"].append({"from": "person", "name": "likes", "to": "person", "match": "knows"})
    error, line = refused(doc, tmp_path)
    assert error.key_path == "relations[1].match"
    assert "source.edge_files[0].relation_column cannot tell their rows apart" in line
    doc["relations"][1]["match"] = "likes"
    assert len(spec_from_dict(doc, base_dir=tmp_path).relations) == 2
