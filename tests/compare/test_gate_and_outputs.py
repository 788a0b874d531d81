"""The drift gate from a spec, the JSON document against its schema, JUnit, the CLI's exit
codes, labels and part moves, and refusals of bundles that cannot be matched."""

from __future__ import annotations

import json
import xml.etree.ElementTree as ET
from pathlib import Path

import pyarrow.parquet as pq
import pytest
import yaml

from graphmill import SpecError, compare_bundles, load_spec
from graphmill._schemas import validate_document
from graphmill.cli import main
from graphmill.errors import InputError
from graphmill.spec import GateRule
from tests.compare._versions import build_version

OLD_PEOPLE = {f"p{i:02d}": (float(i % 7), ["red", "blue"][i % 2]) for i in range(40)}
NEW_PEOPLE = {
    f"p{i:02d}": (float(i % 7) + 10.0, ["red", "blue", "teal"][i % 3]) for i in range(5, 50)
}
LABELLED = {
    "label": {"vertex_type": "person", "property": "colour"},
    "split": {"method": "random", "fractions": {"train": 0.6, "validation": 0.2, "test": 0.2}},
}


@pytest.fixture(scope="module")
def pair(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    root = tmp_path_factory.mktemp("pair")
    knows_old = [(f"p{i:02d}", f"p{(i + 1) % 40:02d}") for i in range(40)]
    knows_new = [(f"p{i:02d}", f"p{(i + 1) % 50:02d}") for i in range(5, 50, 2)]
    summary_old = {
        "passed": True,
        "counts": {"error": 0, "warning": 1, "info": 0},
        "findings": [
            {
                "rule": "isolated-vertex",
                "subject": {"vertex_type": "place"},
                "severity": "warning",
                "count": 1,
            }
        ],
    }
    summary_new = {
        "passed": True,
        "counts": {"error": 0, "warning": 1, "info": 0},
        "findings": [
            {
                "rule": "self-loop",
                "subject": {"relation": "person.knows.person"},
                "severity": "warning",
                "count": 2,
            }
        ],
    }
    old = build_version(root / "old", OLD_PEOPLE, ["home"], knows_old, [], summary_old, **LABELLED)
    new = build_version(root / "new", NEW_PEOPLE, ["home"], knows_new, [], summary_new, **LABELLED)
    return old, new


def test_document_matches_its_schema_and_reports_label_parts_findings(pair) -> None:
    doc = compare_bundles(*pair).to_dict()
    validate_document("comparison", doc)
    person = doc["vertex_types"]["person"]
    assert (person["old"], person["new"], person["kept"]) == (40, 45, 35)
    assert person["values_changed"]["score"] == 35  # every kept score moved up by 10
    assert person["numeric_drift"]["score"]["ks"] == 1.0  # the two ranges do not overlap
    assert person["categorical_drift"]["colour"]["new_categories"] == ["teal"]
    moves = person["part_moves"]
    assert sum(t["count"] for t in moves["transitions"]) == 35
    assert moves["changed"] == sum(t["count"] for t in moves["transitions"] if t["from"] != t["to"])
    label = doc["label"]
    assert label["old"] == {"blue": 20, "red": 20} and label["new_classes"] == ["teal"]
    assert [f["rule"] for f in doc["findings"]["appeared"]] == ["self-loop"]
    assert [f["rule"] for f in doc["findings"]["disappeared"]] == ["isolated-vertex"]


def test_gate_findings_follow_the_rules(pair) -> None:
    rules = {
        "feature-ks": GateRule(0.5, "error"),
        "vertices-removed": GateRule(0.5, "warning"),  # 5 of 40 removed: under the limit
        "new-categories": GateRule(0, "warning"),
        "label-shift": GateRule(0.01, "off"),
    }
    result = compare_bundles(*pair, rules=rules)
    found = {
        (f["rule"], f["subject"].get("property")): f for f in result.to_dict()["gate"]["findings"]
    }
    assert set(found) == {("feature-ks", "score"), ("new-categories", "colour")}
    assert not result.passed and int(result.exit_code) == 1
    assert {e["rule"] for e in result.evaluated} == {
        "feature-ks",
        "vertices-removed",
        "new-categories",
    }


def test_cli_exit_codes_junit_json_and_index_maps(pair, tmp_path: Path, capsys) -> None:
    old, new = pair
    spec = tmp_path / "spec.yaml"
    document = {
        "spec_version": 1,
        "source": {
            "kind": "table-files",
            "vertex_files": [{"path": "x.csv", "id_column": "id", "type": "person"}],
        },
        "vertex_types": {"person": {}},
        "drift_gate": {
            "rules": {
                "feature-psi": {"limit": 0.25},
                "edges-added": {"limit": 0.1, "severity": "warning"},
            }
        },
        "output": {"bundle": "b"},
    }
    spec.write_text(yaml.safe_dump(document))
    junit, maps = tmp_path / "drift.xml", tmp_path / "maps"
    code = main(
        [
            "compare",
            str(old),
            str(new),
            "--spec",
            str(spec),
            "--junit",
            str(junit),
            "--index-maps",
            str(maps),
            "--json",
        ]
    )
    assert code == 1
    printed = json.loads(capsys.readouterr().out)
    validate_document("comparison", printed)
    suite = ET.parse(junit).getroot()
    assert int(suite.get("failures")) == 1  # the psi error; the warning does not fail
    assert int(suite.get("tests")) == printed["gate"]["evaluated"]
    table = pq.read_table(maps / "person.parquet")
    assert table.num_rows == 35 and table.column_names == ["old_index", "new_index"]
    assert main(["compare", str(old), str(old)]) == 0
    assert "PASSED" in capsys.readouterr().out


def test_schema_command_prints_the_comparison_schema(capsys) -> None:
    assert main(["schema", "comparison"]) == 0
    assert json.loads(capsys.readouterr().out)["title"].startswith("graphmill comparison")


def test_unknown_drift_rule_is_refused_with_a_suggestion(tmp_path: Path) -> None:
    spec = tmp_path / "spec.yaml"
    spec.write_text(
        yaml.safe_dump(
            {
                "spec_version": 1,
                "source": {
                    "kind": "table-files",
                    "vertex_files": [{"path": "x.csv", "id_column": "id", "type": "a"}],
                },
                "vertex_types": {"a": {}},
                "drift_gate": {"rules": {"feature-pi": {"limit": 1}}},
                "output": {"bundle": "b"},
            }
        )
    )
    with pytest.raises(SpecError, match="did you mean 'feature-psi'"):
        load_spec(spec)


def test_bare_off_severity_is_accepted(tmp_path: Path) -> None:
    spec = tmp_path / "spec.yaml"
    spec.write_text(
        "spec_version: 1\nsource: {kind: table-files, vertex_files: "
        "[{path: x.csv, id_column: id, type: a}]}\n"
        "vertex_types: {a: {}}\ndrift_gate: {rules: {feature-ks: {limit: 0.1, severity: off}}}\n"
        "output: {bundle: b}\n"
    )
    assert load_spec(spec).drift_gate.rules["feature-ks"] == GateRule(0.1, "off")


def test_pseudonymized_against_plain_is_refused(pair, tmp_path: Path, monkeypatch) -> None:
    monkeypatch.setenv("GM_TEST_KEY", "k" * 32)
    ids = {"ids": {"pseudonymize": True, "key_env": "GM_TEST_KEY"}}
    hidden = build_version(tmp_path / "p", OLD_PEOPLE, ["home"], [], [], **ids)
    with pytest.raises(InputError, match="original IDs and the other pseudonyms"):
        compare_bundles(pair[0], hidden)
    same_key = build_version(tmp_path / "q", NEW_PEOPLE, ["home"], [], [], **ids)
    assert compare_bundles(hidden, same_key).to_dict()["vertex_types"]["person"]["kept"] == 35
    monkeypatch.setenv("GM_TEST_KEY", "z" * 32)
    other_key = build_version(tmp_path / "r", NEW_PEOPLE, ["home"], [], [], **ids)
    with pytest.raises(InputError, match="different keys"):
        compare_bundles(hidden, other_key)
    assert main(["compare", str(hidden), str(other_key)]) == 2
