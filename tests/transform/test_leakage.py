"""The leakage rules against brute-force recounts on networkx graphs, and the build's gate."""

from __future__ import annotations

import json
import random
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any

import networkx as nx
import numpy as np
import pandas as pd
import pyarrow as pa
import pytest
import yaml

from graphmill.cli import main
from graphmill.errors import ExitCode
from graphmill.transform import build_bundle
from graphmill.transform._leakage import after_cut, parallel_in_other, seen_in_training
from graphmill.transform._leakage_audit import LeakageError

from ._snapshots import publish, spec_document


def directed_copy(graph: nx.Graph) -> tuple[np.ndarray, list[Any]]:
    """Both directions of every edge as endpoint indices [2, 2E], and the node order."""
    nodes = sorted(graph)
    at = {n: i for i, n in enumerate(nodes)}
    pairs = [(at[u], at[v]) for u, v in graph.edges] + [(at[v], at[u]) for u, v in graph.edges]
    return np.array(pairs, dtype=np.int64).T, nodes


@pytest.mark.parametrize(
    "graph",
    [nx.karate_club_graph(), nx.les_miserables_graph()],  # networkx classic graphs
    ids=["karate", "les-miserables"],
)
def test_seen_in_training_matches_a_brute_force_recount(graph: nx.Graph) -> None:
    ends, nodes = directed_copy(graph)
    rnd = np.random.default_rng(3)
    naive = rnd.choice(3, size=ends.shape[1], p=[0.7, 0.15, 0.15])  # directions split apart
    train, evaluation = np.flatnonzero(naive == 0), np.flatnonzero(naive > 0)
    found = seen_in_training(ends, evaluation, train, width=len(nodes), same_type=True)
    trained = {(int(s), int(t)) for s, t in ends[:, train].T}
    brute = [
        int(i)
        for i in evaluation
        if (ends[0, i], ends[1, i]) in trained or (ends[1, i], ends[0, i]) in trained
    ]
    assert found.tolist() == sorted(brute) and len(brute) > 0
    one_way = seen_in_training(ends, evaluation, train, width=len(nodes), same_type=False)
    assert one_way.tolist() == sorted(i for i in brute if (ends[0, i], ends[1, i]) in trained)


def test_parallel_and_after_cut_match_brute_force() -> None:
    graph = nx.les_miserables_graph()  # networkx
    ends, nodes = directed_copy(graph)
    width = len(nodes)
    rnd = random.Random(4)
    other = rnd.sample([tuple(p) for p in ends.T.tolist()], 100)
    codes = np.array([s * width + t for s, t in other], dtype=np.int64)
    evaluation = np.arange(0, ends.shape[1], 3)
    found = parallel_in_other(ends, evaluation, codes, width=width)
    assert found.tolist() == [i for i in evaluation if tuple(ends[:, i]) in set(other)]
    start = datetime(2021, 1, 1, tzinfo=UTC)
    stamps = pd.Series([start + timedelta(days=rnd.randrange(400)) for _ in range(ends.shape[1])])
    cut = pd.Timestamp("2021-11-01", tz="UTC")  # pandas' own comparison below
    micros = np.array([(t - pd.Timestamp(0, tz="UTC")) // pd.Timedelta(1, "us") for t in stamps])
    training = np.arange(0, ends.shape[1], 2)
    got = after_cut(
        micros.astype(np.float64),
        training,
        (cut - pd.Timestamp(0, tz="UTC")) // pd.Timedelta(1, "us"),
    )
    assert got.tolist() == [int(i) for i in training if stamps[i] >= cut]


def shop_tables() -> dict[str, pa.Table]:
    graph = nx.bipartite.random_graph(25, 30, 0.2, seed=21)  # networkx.bipartite generator
    left = sorted(n for n, side in graph.nodes(data="bipartite") if side == 0)
    right = sorted(n for n, side in graph.nodes(data="bipartite") if side == 1)
    rows = sorted((u, v) if u in left else (v, u) for u, v in graph.edges)
    sells = rows[::2]  # every second stocked pair is also sold: parallel edges
    return {
        "shop": pa.table({"vertex_id": [f"s{n:03d}" for n in left]}),
        "item": pa.table({"vertex_id": [f"i{n:03d}" for n in right]}),
        "shop.stocks.item": pa.table(
            {
                "source_id": [f"s{u:03d}" for u, _ in rows],
                "target_id": [f"i{v:03d}" for _, v in rows],
            }
        ),
        "shop.sells.item": pa.table(
            {
                "source_id": [f"s{u:03d}" for u, _ in sells],
                "target_id": [f"i{v:03d}" for _, v in sells],
            }
        ),
    }


def shop_document(out: Path, **checks: Any) -> dict[str, Any]:
    return spec_document(
        out,
        {"shop": {}, "item": {}},
        [
            {"from": "shop", "name": "stocks", "to": "item"},
            {"from": "shop", "name": "sells", "to": "item"},
        ],
        task={"kind": "links", "relations": ["shop.stocks.item"]},
        edges={"add_reverse": True},
        checks=checks,
    )


def test_parallel_relation_is_a_warning_or_a_refusal(tmp_path: Path) -> None:
    tables = shop_tables()
    spec, snapshot = publish(shop_document(tmp_path / "warn"), tables)
    info = build_bundle(spec, snapshot)

    manifest = json.loads((spec.output.bundle / "manifest.json").read_text())
    audit = manifest["leakage"]
    assert audit["passed"] and [f["rule"] for f in audit["findings"]] == [
        "evaluation-pair-in-other-relation"
    ]
    sold = set(
        zip(
            *(tables["shop.sells.item"].column(c).to_pylist() for c in ("source_id", "target_id")),
            strict=True,
        )
    )
    finding = audit["findings"][0]
    assert all((r["source"], r["target"]) in sold for r in finding["sample"])
    assert any("leakage" in w for w in info.warnings)
    strict = shop_document(
        tmp_path / "refuse", severity={"evaluation-pair-in-other-relation": "error"}
    )
    spec, snapshot = publish(strict, tables)
    with pytest.raises(LeakageError) as refused:
        build_bundle(spec, snapshot)
    assert "evaluation-pair-in-other-relation" in str(refused.value)
    assert not spec.output.bundle.exists()
    build_bundle(spec, snapshot, even_if_leaking=True)
    manifest = json.loads((spec.output.bundle / "manifest.json").read_text())
    assert manifest["leakage"]["passed"] is False


def test_a_later_copy_of_a_trained_pair_is_found(tmp_path: Path) -> None:
    graph = nx.karate_club_graph()  # networkx
    start = datetime(2022, 1, 1, tzinfo=UTC)
    edges = list(graph.edges)
    times = [start + timedelta(days=3 * i) for i in range(len(edges))]
    late = [(u, v) for u, v in edges[:4]]  # early pairs seen again after every cut
    rows = edges + late
    stamps = times + [start + timedelta(days=1000)] * len(late)
    tables = {
        "person": pa.table({"vertex_id": [f"k{n:02d}" for n in graph]}),
        "person.knows.person": pa.table(
            {
                "source_id": [f"k{u:02d}" for u, _ in rows],
                "target_id": [f"k{v:02d}" for _, v in rows],
                "since": pa.array(stamps, pa.timestamp("us", tz="UTC")),
            }
        ),
    }
    document = spec_document(
        tmp_path,
        {"person": {}},
        [
            {
                "from": "person",
                "name": "knows",
                "to": "person",
                "undirected": True,
                "properties": {"since": {"kind": "datetime"}},
            }
        ],
        task={
            "kind": "links",
            "relations": ["person.knows.person"],
            "by_time": {"property": "since", "validation_from": 0.7, "test_from": 0.85},
        },
        edges={"duplicates": "keep"},
    )
    spec, snapshot = publish(document, tables)
    with pytest.raises(LeakageError) as refused:
        build_bundle(spec, snapshot)
    assert "training-edge-after-cut" in str(refused.value)
    build_bundle(spec, snapshot, even_if_leaking=True)

    manifest = json.loads((spec.output.bundle / "manifest.json").read_text())
    (finding,) = [
        f for f in manifest["leakage"]["findings"] if f["rule"] == "training-edge-after-cut"
    ]
    assert finding["count"] == 2 * len(late)  # each late copy, in both directions


def _cli_project(root: Path, severity: str) -> Path:
    """Table files with two relations over the same pairs; links on one of them."""
    root.mkdir(parents=True)
    people = [f"p{i:02d}" for i in range(12)]
    pairs = [(a, b) for i, a in enumerate(people) for b in people[i + 1 : i + 4]]
    (root / "people.csv").write_text("ref\n" + "\n".join(people) + "\n")
    (root / "knows.csv").write_text("a,b\n" + "\n".join(f"{a},{b}" for a, b in pairs) + "\n")
    document = {
        "spec_version": 1,
        "source": {
            "kind": "table-files",
            "vertex_files": [{"path": "people.csv", "id_column": "ref", "type": "person"}],
            "edge_files": [
                {"path": "knows.csv", "source_column": "a", "target_column": "b", "relation": name}
                for name in ("knows", "likes")
            ],
        },
        "vertex_types": {"person": {}},
        "relations": [
            {"from": "person", "name": name, "to": "person"} for name in ("knows", "likes")
        ],
        "task": {"kind": "links", "relations": ["person.knows.person"]},
        "checks": {"severity": {"evaluation-pair-in-other-relation": severity}},
        "output": {"bundle": "out/bundle"},
    }
    (root / "spec.yaml").write_text(yaml.safe_dump(document, sort_keys=False))
    return root / "spec.yaml"


def test_cli_gate_and_even_if_failing(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    spec = _cli_project(tmp_path / "a", "error")
    assert main(["pull", str(spec), "--no-progress"]) == 0
    assert main(["check", str(spec), "--no-progress"]) == ExitCode.CHECKS_FAILED
    report = json.loads((tmp_path / "a/out/bundle.snapshot.report.json").read_text())
    assert [f["rule"] for f in report["findings"] if f["severity"] == "error"] == [
        "evaluation-pair-in-other-relation"
    ]
    capsys.readouterr()
    code = main(["build", str(spec), "--no-progress"])  # its checks hold the audit
    err = capsys.readouterr().err
    assert code == ExitCode.CHECKS_FAILED and "evaluation-pair-in-other-relation" in err
    assert "Traceback" not in err and not (tmp_path / "a/out/bundle").exists()
    assert main(["build", str(spec), "--even-if-failing", "--no-progress"]) == 1
    manifest = json.loads((tmp_path / "a/out/bundle/manifest.json").read_text())
    assert manifest["leakage"]["passed"] is False
    relaxed = _cli_project(tmp_path / "b", "warning")
    assert main(["run", str(relaxed), "--no-progress"]) == 0


def test_inspect_names_the_task_and_the_audit(tmp_path: Path) -> None:
    from graphmill._inspect_text import summary_lines
    from graphmill.bundle import inspect_bundle

    spec, snapshot = publish(shop_document(tmp_path), shop_tables())
    build_bundle(spec, snapshot)
    lines = summary_lines(inspect_bundle(spec.output.bundle))
    assert "task: links on shop.stocks.item" in lines
    assert any(line.startswith("leakage audit: passed (0 errors, 1 warning)") for line in lines)
