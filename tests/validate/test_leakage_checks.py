"""The leakage audit in the check report equals the manifest's, on networkx graphs (karate
club, Les Misérables, a bipartite generator), and gates the check like any rule."""

from __future__ import annotations

import json
import xml.etree.ElementTree as ET
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any

import networkx as nx
import pyarrow as pa
import pytest
import yaml

from graphmill._schemas import validate_document
from graphmill.cli import main
from graphmill.errors import ExitCode
from graphmill.pipeline import Pipeline
from graphmill.snapshot import Snapshot
from graphmill.spec import PipelineSpec
from graphmill.transform import build_bundle
from graphmill.transform._leakage_audit import audit_reads
from graphmill.validate import Report, run_checks
from graphmill.validate._junit import junit_xml
from graphmill.validate._leakage_checks import CHECKED
from tests.transform._snapshots import publish, spec_document
from tests.transform.test_leakage import shop_document, shop_tables
from tests.transform.test_leakage_labels import build as karate_case
from tests.transform.test_leakage_moves import karate_build


def les_miserables(out: Path, **checks: Any) -> tuple[PipelineSpec, Snapshot]:
    """Les Misérables co-appearances (networkx classic graph) as an undirected relation with
    a time per scene, a links task split by time, late copies of early pairs (after every
    cut: training-edge-after-cut) and every third pair also in a second relation
    (evaluation-pair-in-other-relation)."""
    graph = nx.les_miserables_graph()
    names = {n: f"c{i:02d}" for i, n in enumerate(sorted(graph))}
    pairs = [(names[u], names[v]) for u, v in graph.edges]
    start = datetime(2020, 1, 1, tzinfo=UTC)
    late = pairs[:5]
    rows = pairs + late
    stamps = [start + timedelta(days=i) for i in range(len(pairs))]
    stamps += [start + timedelta(days=5000)] * len(late)
    echo = pairs[::3]
    tables = {
        "character": pa.table({"vertex_id": sorted(names.values())}),
        "character.meets.character": pa.table(
            {
                "source_id": [u for u, _ in rows],
                "target_id": [v for _, v in rows],
                "at": pa.array(stamps, pa.timestamp("us", tz="UTC")),
            }
        ),
        "character.echoes.character": pa.table(
            {"source_id": [u for u, _ in echo], "target_id": [v for _, v in echo]}
        ),
    }
    document = spec_document(
        out,
        {"character": {}},
        [
            {
                "from": "character",
                "name": "meets",
                "to": "character",
                "undirected": True,
                "properties": {"at": {"kind": "datetime"}},
            },
            {"from": "character", "name": "echoes", "to": "character"},
        ],
        task={
            "kind": "links",
            "relations": ["character.meets.character"],
            "by_time": {"property": "at", "validation_from": 0.7, "test_from": 0.85},
        },
        edges={"duplicates": "keep"},
        checks={"severity": checks} if checks else {},
    )
    return publish(document, tables)


def _karate(out: Path) -> tuple[PipelineSpec, Snapshot]:
    (spec, snapshot), _ = karate_case(out, copy=True)  # networkx karate club, a club copy
    return spec, snapshot


def _shop(out: Path) -> tuple[PipelineSpec, Snapshot]:
    return publish(shop_document(out), shop_tables())  # networkx.bipartite generator


MOVES = "part-changed-since-previous"
CASES = {"karate": _karate, "les-miserables": les_miserables, "bipartite": _shop}


def _as_manifest(report: Report) -> list[dict[str, Any]]:
    """The report's leakage findings in the manifest's form (extra fields from details)."""
    out = []
    for f in report.findings:
        if f.rule in CHECKED:
            entry = f.to_dict()
            entry.pop("rate")
            out.append({**entry.pop("details"), **entry})
    return out


@pytest.mark.parametrize("case", list(CASES))
def test_check_report_findings_equal_the_manifests(case: str, tmp_path: Path) -> None:
    spec, snapshot = CASES[case](tmp_path)
    report = run_checks(spec, snapshot)
    validate_document("report", report.to_dict())
    build_bundle(spec, snapshot, even_if_leaking=True)
    manifest = json.loads((spec.output.bundle / "manifest.json").read_text())
    expected = manifest["leakage"]["findings"]
    assert _as_manifest(report) == expected and expected  # each case finds something
    assert report.passed is manifest["leakage"]["passed"]
    audited = {
        (e.rule, json.dumps(e.subject, sort_keys=True))
        for e in report.evaluated
        if e.rule in CHECKED
    }
    found = {(f["rule"], json.dumps(f["subject"], sort_keys=True)) for f in expected}
    assert found <= audited  # every finding's subject is an evaluated check


def test_les_miserables_finds_each_link_rule(tmp_path: Path) -> None:
    spec, snapshot = les_miserables(tmp_path)
    report = run_checks(spec, snapshot)
    rules = {f.rule: f for f in report.findings if f.rule in CHECKED}
    assert set(rules) == {"training-edge-after-cut", "evaluation-pair-in-other-relation"}
    # each late copy is a training edge after the cut, in both directions (symmetrized)
    assert rules["training-edge-after-cut"].count == 2 * 5
    assert not report.passed  # training-edge-after-cut is an error by default
    statuses = {e.rule: e.status for e in report.evaluated if e.rule in CHECKED}
    assert statuses == {
        "evaluation-edge-in-training": "pass",
        "evaluation-pair-in-other-relation": "warn",
        "training-edge-after-cut": "fail",
    }


def test_severities_and_off_come_from_the_spec(tmp_path: Path) -> None:
    spec, snapshot = les_miserables(
        tmp_path,
        **{"training-edge-after-cut": "off", "evaluation-pair-in-other-relation": "error"},
    )
    report = run_checks(spec, snapshot)
    assert "training-edge-after-cut" not in {e.rule for e in report.evaluated}
    (finding,) = [f for f in report.findings if f.rule in CHECKED]
    assert finding.rule == "evaluation-pair-in-other-relation" and finding.severity == "error"
    assert not report.passed


def test_junit_has_a_leakage_suite(tmp_path: Path) -> None:
    spec, snapshot = _karate(tmp_path)
    report = run_checks(spec, snapshot)
    root = ET.fromstring(junit_xml(report))
    (suite,) = [s for s in root if s.get("name") == "graphmill.leakage"]
    failed = [c.get("name") for c in suite if c.find("failure") is not None]
    assert failed == ["feature-copies-label [person.faction]"]
    assert int(suite.get("tests", "0")) == 3  # degree, badge, faction


def test_no_audit_without_a_task_or_labelled_features(tmp_path: Path) -> None:
    graph = nx.karate_club_graph()  # networkx
    tables = {
        "person": pa.table({"vertex_id": [f"k{n:02d}" for n in graph]}),
        "person.knows.person": pa.table(
            {
                "source_id": [f"k{u:02d}" for u, _ in graph.edges],
                "target_id": [f"k{v:02d}" for _, v in graph.edges],
            }
        ),
    }
    document = spec_document(
        tmp_path, {"person": {}}, [{"from": "person", "name": "knows", "to": "person"}]
    )
    report = run_checks(*publish(document, tables))
    assert not [e for e in report.evaluated if e.rule in CHECKED]


@pytest.mark.parametrize("seed", [5, 6])
def test_part_moves_in_check_equal_the_manifests(tmp_path: Path, seed: int) -> None:
    """Karate club twice (networkx), the second time 5% changed; another seed moves kept
    vertices. The check compares with the previous bundle through a trial build."""
    spec, snapshot = karate_build(tmp_path / "v1", changed=False, seed=5)
    first = build_bundle(spec, snapshot).bundle
    spec, snapshot = karate_build(
        tmp_path / "v2",
        changed=True,
        seed=seed,
        drift_gate={"previous": str(first)},
        checks={"severity": {MOVES: "error"}},
    )
    report = run_checks(spec, snapshot)
    validate_document("report", report.to_dict())
    assert [e.status for e in report.evaluated if e.rule == MOVES] == [
        "pass" if seed == 5 else "fail"
    ]
    assert not spec.output.bundle.exists()  # the trial build published nothing
    assert not list((tmp_path / "v2").glob(".bundle.check-*"))  # and left nothing behind
    build_bundle(spec, snapshot, even_if_leaking=True)
    manifest = json.loads((spec.output.bundle / "manifest.json").read_text())
    expected = [
        f for f in (manifest.get("leakage") or {}).get("findings", []) if f["rule"] == MOVES
    ]
    assert [f for f in _as_manifest(report) if f["rule"] == MOVES] == expected
    assert report.passed is (seed == 5) and bool(expected) is (seed == 6)


def test_check_cli_takes_previous(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    spec, snapshot = karate_build(tmp_path / "v1", changed=False, seed=5)
    first = build_bundle(spec, snapshot).bundle
    spec, snapshot = karate_build(
        tmp_path / "v2", changed=True, seed=6, checks={"severity": {MOVES: "error"}}
    )
    spec_file = tmp_path / "v2.yaml"
    spec_file.write_text(yaml.safe_dump(spec.raw))
    assert main(["check", str(spec_file), "--no-progress"]) == 0  # nothing named: not run
    code = main(["check", str(spec_file), "--previous", str(first), "--no-progress"])
    out = capsys.readouterr().out
    assert code == ExitCode.CHECKS_FAILED and MOVES in out


def test_build_leaves_part_moves_to_its_own_build(
    tmp_path: Path, caplog: pytest.LogCaptureFixture
) -> None:
    from graphmill.pipeline import Pipeline

    spec, snapshot = karate_build(tmp_path / "v1", changed=False, seed=5)
    first = build_bundle(spec, snapshot).bundle
    spec, _ = karate_build(tmp_path / "v2", changed=True, seed=6)
    pipeline = Pipeline(spec)
    with caplog.at_level("INFO", logger="graphmill.pipeline"):
        info = pipeline.build(previous=first)
    assert "left to the build" in caplog.text
    assert pipeline.last_report is not None
    assert MOVES not in {e.rule for e in pipeline.last_report.evaluated}
    assert info.leakage is not None  # the build evaluated it (a warning by default)
    assert [f["rule"] for f in info.leakage["findings"]] == [MOVES]


def test_the_audit_reads_only_what_its_rules_read(tmp_path: Path) -> None:
    """The labelled type alone for feature-copies-label; a links task's relations between
    the same types (and the types), and only the linked one when the cross-relation rule is
    off."""
    spec, _ = _karate(tmp_path / "karate")
    assert audit_reads(spec) == ({"person"}, set())
    spec, _ = les_miserables(tmp_path / "les")
    both = {"character.meets.character", "character.echoes.character"}
    assert audit_reads(spec) == ({"character"}, both)
    spec, _ = les_miserables(tmp_path / "off", **{"evaluation-pair-in-other-relation": "off"})
    assert audit_reads(spec) == ({"character"}, {"character.meets.character"})


def _bundle_files(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in folder.rglob("*") if p.is_file()}


def test_the_build_reuses_the_checks_vertex_index(tmp_path: Path) -> None:
    """Check then build in one pipeline takes the audit's vertex index (with its keyed-hash
    numbers) instead of computing it again, and writes the same bytes as without it."""
    spec, _ = _karate(tmp_path)
    pipeline = Pipeline(spec)
    report = pipeline.check()
    assert len(pipeline._memo) == 1  # the labelled type's index, kept for the build
    pipeline.build(report=report, even_if_failing=True)
    assert len(pipeline._memo) == 0  # taken by the build, nothing held past it
    reused = _bundle_files(spec.output.bundle)
    report = pipeline.check()
    pipeline._memo.clear()  # the build computes everything itself
    pipeline.build(report=report, even_if_failing=True)
    assert _bundle_files(spec.output.bundle) == reused
