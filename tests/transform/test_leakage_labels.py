"""The feature-copies-label rule against brute-force recounts on networkx's karate club:
a copy of the 'club' attribute is found, a legitimate feature and an identifier are not,
the gate obeys checks.severity, and numeric targets are scored with pandas' correlation."""

from __future__ import annotations

import json
from collections import Counter
from pathlib import Path
from typing import Any

import networkx as nx
import numpy as np
import pyarrow as pa
import pytest

from graphmill.bundle import load_bundle
from graphmill.errors import SpecError
from graphmill.transform import build_bundle
from graphmill.transform._leakage_audit import LeakageError
from graphmill.transform._leakage_labels import copy_accuracy, value_codes

from ._snapshots import publish, spec_document


def brute_loo_correct(values: list[Any], labels: list[Any]) -> int:
    """Vertices whose label is the strict majority among the others with the same value."""
    correct = 0
    for i, (v, c) in enumerate(zip(values, labels, strict=True)):
        if v is None:
            continue
        others = Counter(
            labels[j] for j in range(len(values)) if j != i and values[j] == v
        ).most_common()
        if others and others[0][0] == c and (len(others) == 1 or others[1][1] < others[0][1]):
            correct += 1
    return correct


@pytest.mark.parametrize("seed", range(6))
def test_copy_accuracy_matches_a_brute_force_recount(seed: int) -> None:
    graph = nx.les_miserables_graph()  # networkx classic graph: degrees as a feature
    rnd = np.random.default_rng(seed)
    degrees = [d % (seed + 3) for _, d in sorted(graph.degree)]
    labels = rnd.integers(0, 3, size=len(degrees)).tolist()
    values = [None if rnd.random() < 0.1 else d for d in degrees]
    codes = value_codes(pa.array(values, pa.int64()))
    got, _ = copy_accuracy(codes, np.array(labels))
    assert got == brute_loo_correct(values, labels)


def karate(copy: bool, **extra: Any) -> tuple[dict[str, Any], dict[str, pa.Table]]:
    graph = nx.karate_club_graph()  # networkx.karate_club_graph: 'club' is Mr. Hi / Officer
    clubs = [graph.nodes[n]["club"] for n in graph]
    people = pa.table(
        {
            "vertex_id": [f"k{n:02d}" for n in graph],
            "club": clubs,
            "faction": [c.upper() for c in clubs],  # a near-copy under another name
            "degree": [graph.degree(n) for n in graph],
            "badge": [f"b{n}" for n in graph],  # an identifier: every value once
        }
    )
    knows = pa.table(
        {
            "source_id": [f"k{u:02d}" for u, _ in graph.edges],
            "target_id": [f"k{v:02d}" for _, v in graph.edges],
        }
    )
    features = [
        {"property": "degree", "encoding": "standardize"},
        {"property": "badge", "encoding": "one-hot"},
    ]
    if copy:
        features.append({"property": "faction", "encoding": "one-hot"})
    props = {p: None for p in ("club", "faction", "degree", "badge")}
    document = {
        "vertex_types": {"person": {"properties": props}},
        "relations": [{"from": "person", "name": "knows", "to": "person", "undirected": True}],
        "label": {"vertex_type": "person", "property": "club"},
        "features": {"person": features},
        "split": {"seed": 5},
        **extra,
    }
    return document, {"person": people, "person.knows.person": knows}


def build(tmp_path: Path, copy: bool, **extra: Any) -> tuple[Any, dict[str, pa.Table]]:
    document, tables = karate(copy, **extra)
    full = spec_document(tmp_path, document.pop("vertex_types"), document.pop("relations"))
    spec, snapshot = publish({**full, **document}, tables)
    return (spec, snapshot), tables


def test_a_copy_of_the_club_is_refused_and_counted(tmp_path: Path) -> None:
    (spec, snapshot), tables = build(tmp_path / "a", copy=True)
    with pytest.raises(LeakageError) as refused:
        build_bundle(spec, snapshot)
    assert "feature-copies-label" in str(refused.value) and "person.faction" in str(refused.value)
    assert not spec.output.bundle.exists()
    build_bundle(spec, snapshot, even_if_leaking=True)
    bundle = load_bundle(spec.output.bundle)
    audit = bundle.manifest["leakage"]
    (finding,) = audit["findings"]  # degree and the identifier badge are no copies
    assert audit["passed"] is False and finding["rule"] == "feature-copies-label"
    assert finding["subject"] == {"vertex_type": "person", "property": "faction"}
    train = bundle.vertex_types["person"].parts["train"].numpy().tolist()
    frame = tables["person"].to_pandas().iloc[train]  # brute-force recount over the train part
    expected = brute_loo_correct(frame["faction"].tolist(), frame["club"].tolist())
    assert finding["count"] == expected == len(train) and finding["denominator"] == len(train)
    assert finding["score"] == 1.0
    ids = set(frame["vertex_id"])
    assert finding["sample"] and all(row["vertex"] in ids for row in finding["sample"])
    for prop in ("degree", "badge"):  # their own recounts stay below the threshold
        assert brute_loo_correct(frame[prop].tolist(), frame["club"].tolist()) < 0.99 * len(train)


def test_severity_threshold_and_did_you_mean(tmp_path: Path) -> None:
    (spec, snapshot), _ = build(
        tmp_path / "w", copy=True, checks={"severity": {"feature-copies-label": "warning"}}
    )
    info = build_bundle(spec, snapshot)
    assert info.leakage is not None and info.leakage["passed"]
    assert any("feature-copies-label" in w for w in info.warnings)
    (spec, snapshot), _ = build(
        tmp_path / "o", copy=True, checks={"severity": {"feature-copies-label": False}}
    )
    info = build_bundle(spec, snapshot)  # a bare YAML off is False
    assert info.leakage is not None and info.leakage["findings"] == []
    (spec, snapshot), _ = build(tmp_path / "c", copy=False)
    manifest = json.loads((build_bundle(spec, snapshot).bundle / "manifest.json").read_text())
    assert manifest["leakage"]["passed"] and manifest["leakage"]["findings"] == []
    with pytest.raises(SpecError) as typo:
        build(tmp_path / "t", copy=True, checks={"severity": {"feature-copies-labels": "off"}})
    assert "did you mean 'feature-copies-label'" in str(typo.value)
    with pytest.raises(SpecError) as bad:
        build(tmp_path / "b", copy=True, checks={"label_copy_threshold": 1.5})
    assert "label_copy_threshold" in str(bad.value) + str(bad.value.key_path)
    with pytest.raises(SpecError) as misspelt:
        build(tmp_path / "m", copy=True, checks={"label_copy_treshold": 0.9})
    assert "did you mean 'label_copy_threshold'" in misspelt.value.one_line()


def test_numeric_target_copy_scored_by_correlation(tmp_path: Path) -> None:
    graph = nx.karate_club_graph()  # networkx
    strength = dict(graph.degree(weight="weight"))
    rnd = np.random.default_rng(1)
    noise = rnd.normal(0, 4, size=len(graph))
    people = pa.table(
        {
            "vertex_id": [f"k{n:02d}" for n in graph],
            "strength": [float(strength[n]) for n in graph],
            "twice": [2.0 * strength[n] + 1 for n in graph],  # an affine copy
            "noisy": [float(strength[n] + noise[n]) for n in graph],
        }
    )
    document = spec_document(
        tmp_path,
        {"person": {"properties": {p: {"kind": "float"} for p in ("strength", "twice", "noisy")}}},
        label={"vertex_type": "person", "property": "strength"},
        task={"kind": "vertex-values"},
        features={
            "person": [
                {"property": "twice", "encoding": "standardize"},
                {"property": "noisy", "encoding": "standardize"},
            ]
        },
        checks={"severity": {"feature-copies-label": "warning"}, "label_copy_threshold": 0.999},
    )
    spec, snapshot = publish(document, {"person": people})
    info = build_bundle(spec, snapshot)
    assert info.leakage is not None
    (finding,) = info.leakage["findings"]
    assert finding["subject"]["property"] == "twice" and finding["score"] == pytest.approx(1.0)
    train = load_bundle(spec.output.bundle).vertex_types["person"].parts["train"].numpy()
    frame = people.to_pandas().iloc[train]
    assert abs(frame["noisy"].corr(frame["strength"])) < 0.999  # pandas' Pearson correlation
    assert finding["count"] == len(train)
