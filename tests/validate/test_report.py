"""The report: its JSON Schema, deterministic JSON, JUnit XML, terminal rendering, the
manifest summary, and severity overrides."""

from __future__ import annotations

import dataclasses
import json
import math
import re
import xml.etree.ElementTree as ET
from pathlib import Path

import jsonschema
import pytest
from rich.console import Console

import graphmill.validate as validate
from graphmill._schemas import load_schema, validate_document
from graphmill.errors import InputError, SpecError
from graphmill.spec import CheckSpec
from graphmill.validate import rule_catalogue, run_checks
from graphmill.validate._findings import Evaluation, Finding, subject_label
from graphmill.validate._junit import junit_xml, xml_text
from graphmill.validate._leakage_checks import CHECKED
from graphmill.validate._report import Report
from graphmill.validate._runner import CHECKS
from tests.validate._graphs import make_spec, publish

REPO = Path(__file__).resolve().parents[2]


def _messy(tmp_path: Path, **checks):
    """A graph that trips errors, warnings and notes, with awkward characters in IDs."""
    return publish(
        tmp_path,
        vertex_types={"n": {"properties": {"score": {"kind": "float"}}}, "lonely": {}},
        relations=[{"from": "n", "name": "link", "to": "n", "undirected": True}],
        checks=checks,
        vertices={
            "n": {"vertex_id": ["a", "b", "<&>", "ctl\x01x"], "score": [1.0, math.nan, 2, None]},
            "lonely": {"vertex_id": ["z"]},
        },
        edges={
            "n.link.n": {
                "source_id": ["a", "a", "b", "[bold]x[/bold]", "ctl\x01x"],
                "target_id": ["b", "a", "a", "a", "missing\x02"],
            }
        },
    )


def test_report_schema_is_a_valid_draft_2020_12_schema():
    schema = load_schema("report")
    cls = jsonschema.validators.validator_for(schema)
    assert cls is jsonschema.Draft202012Validator
    cls.check_schema(schema)


def test_rule_ids_agree_everywhere():
    catalogue = list(rule_catalogue())
    assert [rule for rule, _, _ in CHECKS] == catalogue
    # the check report also holds the build's leakage audit (not part-changed-since-previous)
    assert load_schema("report")["$defs"]["rule"]["enum"] == catalogue + list(CHECKED)
    # docs/decisions/0001-architecture.md fixes the rule ids; snapshot-note is added here.
    adr = (REPO / "docs" / "decisions" / "0001-architecture.md").read_text(encoding="utf-8")
    section = adr.split("## Rule ids", 1)[1]
    fixed = re.findall(r"`([a-z-]+)`", section)
    assert fixed == [r for r in catalogue if r != "snapshot-note"]


def test_public_surface_is_sorted_and_resolves():
    assert validate.__all__ == sorted(validate.__all__)
    for name in validate.__all__:
        assert getattr(validate, name) is not None


def test_report_validates_and_counts_are_consistent(tmp_path):
    report = run_checks(*_messy(tmp_path))
    document = report.to_dict()
    validate_document("report", document)
    assert document["report_format"] == 1
    assert document["snapshot"]["tables"] == {
        "vertices": {"n": 4, "lonely": 1},
        "edges": {"n.link.n": 5},
    }
    assert document["snapshot"]["provenance"] == {"kind": "in-memory", "location": "tests/validate"}
    severities = [f["severity"] for f in document["findings"]]
    assert document["counts"] == {s: severities.count(s) for s in ("error", "warning", "info")}
    assert document["passed"] is (document["counts"]["error"] == 0) is False
    evaluated = {(e["rule"], subject_label(e["subject"])) for e in document["evaluated"]}
    assert len(evaluated) == len(document["evaluated"])  # one entry per (rule, subject)
    for finding in document["findings"]:
        assert (finding["rule"], subject_label(finding["subject"])) in evaluated


def test_json_is_deterministic_strict_and_written_atomically(tmp_path):
    first = run_checks(*_messy(tmp_path / "one")).write_json(tmp_path / "out" / "report.json")
    text = first.read_bytes()
    again = run_checks(*_messy(tmp_path / "two"))
    assert again.to_json().encode() == text
    parsed = json.loads(text, parse_constant=lambda c: pytest.fail(f"non-JSON constant {c}"))
    assert json.dumps(parsed, sort_keys=True, indent=2) + "\n" == text.decode()
    non_finite = next(f for f in parsed["findings"] if f["rule"] == "non-finite-number")
    assert non_finite["sample"] == [{"vertex_id": "b", "value": "NaN"}]
    assert [p.name for p in first.parent.iterdir()] == ["report.json"]  # no scratch left


def test_junit_has_one_testcase_per_evaluation_and_fails_exactly_on_errors(tmp_path):
    report = run_checks(*_messy(tmp_path))
    path = report.write_junit(tmp_path / "junit.xml")
    root = ET.parse(path).getroot()
    cases = root.findall("./testsuite/testcase")
    assert len(cases) == len(report.evaluated) == int(root.get("tests"))
    names = [c.get("name") for c in cases]
    assert len(set(names)) == len(names)
    failing = {c.get("name") for c in cases if c.find("failure") is not None}
    errors = {
        f"{f.rule} [{subject_label(f.subject)}]" for f in report.findings if f.severity == "error"
    }
    assert failing == errors and errors
    assert int(root.get("failures")) == len(failing)
    noted = {c.get("name") for c in cases if c.find("system-out") is not None}
    quieter = {
        f"{f.rule} [{subject_label(f.subject)}]" for f in report.findings if f.severity != "error"
    }
    assert noted == quieter
    for suite in root.findall("testsuite"):
        assert int(suite.get("tests")) == len(suite.findall("testcase"))
        assert int(suite.get("failures")) == len(suite.findall("testcase/failure"))
    dangling = next(c for c in cases if c.get("name") == "dangling-edge [n.link.n]")
    text = dangling.find("failure").text
    assert '"source_id": "ctl\\u0001x"' in text  # JSON's own escape, readable in CI
    passing = [c for c in cases if len(c) == 0]
    assert passing, "checks that found nothing are listed too"


def test_junit_replaces_characters_xml_cannot_hold(tmp_path):
    # XML 1.0 (Fifth Edition), section 2.2, production [2] Char (from memory): no
    # U+0000-U+0008, U+000B, U+000C, U+000E-U+001F, U+FFFE, U+FFFF, nor lone surrogates.
    assert xml_text("a\x00b\x0bc\ufffed\td\n中") == "a\ufffdb\ufffdc\ufffdd\td\n中"
    finding = Finding("snapshot-note", "info", {}, 1, 1, [], "note about \x01<&>", {})
    report = Report([finding], [Evaluation("snapshot-note", {}, "info")], {"name": "x"})
    root = ET.fromstring(junit_xml(report))
    out = root.find("./testsuite/testcase/system-out").text
    assert "note about \ufffd<&>" in out


def test_render_prints_findings_and_one_verdict_line(tmp_path):
    report = run_checks(*_messy(tmp_path))
    console = Console(record=True, width=200, color_system=None)
    report.render(console)
    out = console.export_text()
    assert "dangling-edge" in out and "non-finite-number" in out
    assert "[bold]x[/bold]" in out  # IDs are shown as text, not read as markup
    assert out.strip().splitlines()[-1] == report.verdict()
    assert report.verdict().startswith("FAILED: ")


def test_summary_lists_each_finding_compactly(tmp_path):
    report = run_checks(*_messy(tmp_path))
    summary = report.summary()
    assert summary["counts"] == report.counts and summary["passed"] is False
    assert summary["findings"] == [
        {"rule": f.rule, "subject": f.subject, "severity": f.severity, "count": f.count}
        for f in report.findings
    ]
    json.dumps(summary, allow_nan=False)


def test_off_rules_are_not_evaluated_and_passing_graph_passes(tmp_path):
    off = {rule: "off" for rule in rule_catalogue()}
    report = run_checks(*_messy(tmp_path, severity=off))
    assert report.findings == [] and report.evaluated == [] and report.passed
    assert report.verdict().startswith("PASSED: 0 errors")


def test_a_snapshot_pulled_under_another_spec_is_refused_in_one_line(tmp_path):
    _, snapshot = publish(tmp_path, vertex_types={"n": {}}, vertices={"n": {"vertex_id": ["a"]}})
    wider = make_spec(
        tmp_path / "other",
        vertex_types={"n": {}, "m": {}},
        relations=[{"from": "n", "name": "link", "to": "m"}],
    )
    with pytest.raises(InputError) as caught:
        run_checks(wider, snapshot)
    line = caught.value.one_line()
    assert "no vertex table m, which the spec declares (1 more missing)" in line
    assert "graphmill pull" in line and "\n" not in line


def test_unknown_rule_id_in_overrides_is_a_spec_error_with_a_suggestion(tmp_path):
    with pytest.raises(SpecError) as at_load:
        make_spec(tmp_path, checks={"severity": {"self-lop": "error"}})
    assert at_load.value.key_path == "checks.severity.self-lop"
    # a spec built without load_spec (dataclasses.replace) is still refused when checked
    spec = make_spec(tmp_path)
    spec = dataclasses.replace(spec, checks=CheckSpec(severity={"self-lop": "error"}))
    with pytest.raises(SpecError) as caught:
        validate.resolve_severities(spec)
    error = caught.value
    assert error.key_path == "checks.severity.self-lop"
    assert "did you mean 'self-loop'?" in error.one_line()
    assert "\n" not in error.one_line()
