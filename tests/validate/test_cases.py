"""Named cases from ``tests/data/validate/*.yaml``: a small graph and exactly what the checks
must find in it (counts worked out by hand beside each graph)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest
import yaml

from graphmill._schemas import validate_document
from graphmill.validate import run_checks
from tests.validate._graphs import KindedPage, publish

CASES_DIR = Path(__file__).resolve().parents[1] / "data" / "validate"
FIELDS = ("severity", "count", "denominator", "sample")


def _load_cases() -> list[Any]:
    out = []
    for path in sorted(CASES_DIR.glob("*.yaml")):
        for case in yaml.safe_load(path.read_text(encoding="utf-8")):
            out.append(pytest.param(case, id=f"{path.stem}/{case['name']}"))
    return out


def _pages(value: Any) -> Any:
    def one(page: Any) -> Any:
        if isinstance(page, dict) and {"columns", "value_kinds"} <= set(page) <= {
            "columns",
            "value_kinds",
            "raw",
        }:
            return KindedPage(page["columns"], page["value_kinds"], page.get("raw"))
        return page

    return [one(p) for p in value] if isinstance(value, list) else one(value)


def _publish(tmp_path: Path, case: dict[str, Any]) -> Any:
    spec_doc = dict(case.get("spec", {}))
    if "edges" in spec_doc:
        spec_doc["edge_policy"] = spec_doc.pop("edges")
    facets = {tuple(k.split(".")): _pages(v) for k, v in case.get("facets", {}).items()}
    return publish(
        tmp_path,
        vertices={k: _pages(v) for k, v in case.get("vertices", {}).items()},
        edges={k: _pages(v) for k, v in case.get("edges", {}).items()},
        facets=facets or None,
        **spec_doc,
    )


@pytest.mark.parametrize("case", _load_cases())
def test_case(tmp_path: Path, case: dict[str, Any]) -> None:
    spec, snapshot = _publish(tmp_path, case)
    report = run_checks(spec, snapshot)
    validate_document("report", report.to_dict())  # every emitted report matches its schema
    found = [f.to_dict() for f in report.findings]
    evaluated = {(e.rule, tuple(sorted(e.subject.items()))): e.status for e in report.evaluated}

    expected = case.get("expect", [])
    for rule in {e["rule"] for e in expected}:
        want = sorted(tuple(sorted(e["subject"].items())) for e in expected if e["rule"] == rule)
        got = sorted(tuple(sorted(f["subject"].items())) for f in found if f["rule"] == rule)
        assert got == want, f"{rule}: findings for {got}, expected {want}"
    for expectation in expected:
        matches = [
            f
            for f in found
            if f["rule"] == expectation["rule"] and f["subject"] == expectation["subject"]
        ]
        assert len(matches) == 1, expectation
        finding = matches[0]
        for name in FIELDS:
            if name in expectation:
                assert finding[name] == expectation[name], (expectation["rule"], name)
        for key, value in expectation.get("details", {}).items():  # the keys listed
            assert finding["details"][key] == value, (expectation["rule"], key)
        if "message_contains" in expectation:
            assert expectation["message_contains"] in finding["message"]
        assert finding["rate"] == (
            finding["count"] / finding["denominator"] if finding["denominator"] else 0.0
        )
    for item in case.get("passes", []):
        key = (item["rule"], tuple(sorted(item["subject"].items())))
        assert evaluated.get(key) == "pass", (key, evaluated.get(key))
    for item in case.get("not_evaluated", []):
        key = (item["rule"], tuple(sorted(item["subject"].items())))
        assert key not in evaluated, key
    if "passed" in case:
        assert report.passed is case["passed"]


def test_every_rule_has_a_named_case():
    from graphmill.validate import rule_catalogue

    named = {e["rule"] for case in _load_cases() for e in case.values[0].get("expect", [])}
    assert set(rule_catalogue()) - named == set()
