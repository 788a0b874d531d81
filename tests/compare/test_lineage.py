"""Builds after a previous version: lineage in every manifest, the comparison recorded, the
drift gate refusing to publish, and a chain of bundles verified end to end."""

from __future__ import annotations

import hashlib
import itertools
import json
import shutil
from pathlib import Path
from typing import Any

import pytest
import yaml

from graphmill.bundle import canonical_json, read_manifest
from graphmill.cli import main
from graphmill.compare._lineage import spec_sha256, verify_lineage
from graphmill.compare._with_build import DriftGateError
from graphmill.errors import BundleIntegrityError
from graphmill.snapshot import Snapshot
from graphmill.spec import spec_from_dict
from graphmill.transform import build_bundle
from tests.compare._versions import KEEP_ALL, edge_table, people_table
from tests.transform._snapshots import publish, spec_document


def _week(root: Path, week: int, **extra: Any) -> tuple[dict[str, Any], Path]:
    """Publish week ``week``'s snapshot (each week adds 5 people, the score creeps up)."""
    people = {f"p{i:02d}": (float(i + week), "red") for i in range(10 + 5 * week)}
    ids = sorted(people)
    document = spec_document(
        root / f"week{week}",
        {"person": {"properties": {"score": {"kind": "float"}, "colour": {"kind": "string"}}}},
        [{"from": "person", "name": "knows", "to": "person"}],
        edges=KEEP_ALL,
        **extra,
    )
    tables = {
        "person": people_table(people),
        "person.knows.person": edge_table(list(itertools.pairwise(ids))),
    }
    publish(document, tables)
    return document, root / f"week{week}" / "bundle"


def _build(document: dict[str, Any], previous: Path | None = None) -> Path:
    spec = spec_from_dict(document)
    build_bundle(spec, Snapshot.open(spec.output.snapshot), previous=previous)
    return spec.output.bundle


def test_lineage_and_comparison_in_the_manifest(tmp_path: Path) -> None:
    doc1, _ = _week(tmp_path, 1)
    first = _build(doc1)
    m1 = read_manifest(first)
    lineage = m1["lineage"]
    assert lineage["previous_manifest_sha256"] is None and m1["comparison"] is None
    recipe = {k: v for k, v in doc1.items() if k != "output"}
    assert lineage["spec_sha256"] == hashlib.sha256(canonical_json(recipe)).hexdigest()
    on_another_engine = spec_sha256({**doc1, "engine": {"kind": "reference", "threads": 1}})
    assert on_another_engine == lineage["spec_sha256"]  # the engine is not part of the recipe
    snap = json.loads((tmp_path / "week1" / "snapshot" / "snapshot.json").read_text())
    assert {t["sha256"] for t in lineage["snapshot_tables"]} == {
        t["sha256"] for t in snap["tables"]
    }
    doc2, _ = _week(tmp_path, 2)
    second = _build(doc2, previous=first)
    m2 = read_manifest(second)
    assert m2["lineage"]["previous_manifest_sha256"] == m1["manifest_sha256"]
    recorded = m2["comparison"]
    assert recorded["old"] == {
        "name": "testgraph",
        "bundle": "bundle",
        "manifest_sha256": m1["manifest_sha256"],
    }
    assert recorded["vertex_types"]["person"]["added"] == 5
    assert recorded["vertex_types"]["person"]["values_changed"]["score"] == 15
    # a second build of the same inputs is byte-identical, comparison included
    before = (second / "manifest.json").read_bytes()
    _build(doc2, previous=first)
    assert (second / "manifest.json").read_bytes() == before


def test_failing_drift_gate_publishes_nothing(tmp_path: Path) -> None:
    doc1, _ = _week(tmp_path, 1)
    first = _build(doc1)
    gate = {"previous": str(first), "rules": {"vertices-added": {"limit": 0.1}}}
    doc2, target = _week(tmp_path, 2, drift_gate=gate)
    with pytest.raises(DriftGateError, match="vertices-added vertex_type=person"):
        _build(doc2)
    assert not target.exists()
    assert not [p for p in target.parent.iterdir() if p.name.startswith(".bundle")]
    spec_file = tmp_path / "week2.yaml"
    spec_file.write_text(yaml.safe_dump(doc2))
    assert main(["build", str(spec_file)]) == 1
    assert not target.exists()
    assert main(["build", str(spec_file), "--even-if-failing", "--json"]) == 0
    assert read_manifest(target)["comparison"]["gate"]["passed"] is False


def test_a_chain_verifies_end_to_end_and_breaks_where_it_should(tmp_path: Path, capsys) -> None:
    bundles: list[Path] = []
    for week in (1, 2, 3):
        document, _ = _week(tmp_path, week)
        bundles.append(_build(document, previous=bundles[-1] if bundles else None))
    links = verify_lineage(bundles)
    assert [link["previous_manifest_sha256"] for link in links[1:]] == [
        link["manifest_sha256"] for link in links[:-1]
    ]
    assert main(["lineage", *map(str, bundles)]) == 0
    assert "chain of 3 bundles verified" in capsys.readouterr().out
    with pytest.raises(BundleIntegrityError, match="not built after"):
        verify_lineage([bundles[0], bundles[2]])
    assert main(["lineage", str(bundles[0]), str(bundles[2])]) == 8
    broken = tmp_path / "broken"
    shutil.copytree(bundles[1], broken)
    table = next((broken / "tables" / "vertices").iterdir())
    table.write_bytes(table.read_bytes() + b"x")
    with pytest.raises(BundleIntegrityError, match="sha256 differs"):
        verify_lineage([bundles[0], broken, bundles[2]])
