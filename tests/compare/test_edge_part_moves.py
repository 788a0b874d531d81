"""Kept edges that changed part, against an independent pandas recount on a links task built
twice: stable keyed-hash parts keep kept edges in place under the same seed, and another seed
moves them, which the comparison, its gate rule and its summary report."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pandas as pd
import pyarrow as pa
import pytest

from graphmill._schemas import validate_document
from graphmill.compare import compare_bundles
from graphmill.spec import GateRule
from graphmill.transform import build_bundle
from tests.transform._snapshots import publish
from tests.transform.test_leakage import shop_document, shop_tables

STOCKS = "shop.stocks.item"


def _build(root: Path, seed: int, drop: int = 0, extra: int = 0) -> Path:
    tables = shop_tables()
    stocks = tables[STOCKS].slice(drop)  # the first `drop` edges removed
    if extra:  # pairs the random graph does not have: new shops stocking every item
        items = tables["item"].column("vertex_id").to_pylist()[:extra]
        shops = [f"new{i}" for i in range(extra)]
        tables["shop"] = pa.concat_tables([tables["shop"], pa.table({"vertex_id": shops})])
        stocks = pa.concat_tables([stocks, pa.table({"source_id": shops, "target_id": items})])
    tables[STOCKS] = stocks
    document = shop_document(root)
    document["split"] = {
        "seed": seed,
        "fractions": {"train": 0.6, "validation": 0.2, "test": 0.2},
    }
    spec, snapshot = publish(document, tables)
    build_bundle(spec, snapshot)
    return spec.output.bundle


def _edges_with_parts(bundle: Path, dotted: str) -> pd.DataFrame:
    """(source ID, target ID, part) of every edge, read with pandas alone."""
    import json

    manifest = json.loads((bundle / "manifest.json").read_text())
    entry = manifest["relations"][dotted]
    ids = {
        t: pd.read_parquet(bundle / manifest["vertex_types"][t]["table"]).set_index("index")[
            manifest["vertex_types"][t]["id_column"]
        ]
        for t in (entry["source_type"], entry["target_type"])
    }
    edges = pd.read_parquet(bundle / entry["table"])
    split = entry.get("link_split") or entry["parts"]
    parts = pd.read_parquet(bundle / split["table"]).set_index("edge")["part"]
    return pd.DataFrame(
        {
            "source": ids[entry["source_type"]].loc[edges["source_index"]].to_numpy(),
            "target": ids[entry["target_type"]].loc[edges["target_index"]].to_numpy(),
            "part": parts.reindex(range(len(edges))).fillna("(none)").to_numpy(),
        }
    )


def _recount(old: Path, new: Path, dotted: str) -> dict[tuple[str, str], int]:
    a, b = _edges_with_parts(old, dotted), _edges_with_parts(new, dotted)
    assert not a.duplicated(["source", "target"]).any()  # plain sets: a merge matches them
    kept = a.merge(b, on=["source", "target"], suffixes=("_old", "_new"))
    return {
        (str(k[0]), str(k[1])): int(n)
        for k, n in kept.groupby(["part_old", "part_new"]).size().items()
    }


@pytest.fixture(scope="module")
def versions(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    root = tmp_path_factory.mktemp("edge-moves")
    return {
        "v1": _build(root / "v1", seed=5),
        "v2": _build(root / "v2", seed=5, drop=6, extra=4),
        "reseeded": _build(root / "v3", seed=6, drop=6, extra=4),
    }


@pytest.mark.parametrize("dotted", [STOCKS, "item.rev_stocks.shop"])
@pytest.mark.parametrize("second", ["v2", "reseeded"])
def test_edge_part_moves_equal_a_pandas_recount(
    versions: dict[str, Path], second: str, dotted: str
) -> None:
    doc: dict[str, Any] = compare_bundles(versions["v1"], versions[second]).to_dict()
    validate_document("comparison", doc)
    entry = doc["relations"][dotted]
    expected = _recount(versions["v1"], versions[second], dotted)
    got = {(t["from"], t["to"]): t["count"] for t in entry["part_moves"]["transitions"]}
    assert got == expected
    assert sum(got.values()) == entry["kept"] and entry["added"] > 0 and entry["removed"] > 0
    moved = sum(n for (a, b), n in expected.items() if a != b)
    assert entry["part_moves"]["changed"] == moved
    if second == "v2":
        assert moved == 0  # same seed: keyed-hash parts do not move kept edges
    else:
        assert moved > 0  # another seed: a forced move is seen


def test_edge_part_changed_gates_and_shows_in_the_summary(versions: dict[str, Path]) -> None:
    from rich.console import Console

    rules = {"edge-part-changed": GateRule(limit=0.0, severity="error")}
    same = compare_bundles(versions["v1"], versions["v2"], rules=rules)
    assert same.passed
    moved = compare_bundles(versions["v1"], versions["reseeded"], rules=rules)
    assert not moved.passed
    findings = moved.to_dict()["gate"]["findings"]
    assert {f["subject"]["relation"] for f in findings} == {STOCKS, "item.rev_stocks.shop"}
    console = Console(record=True, width=200)
    moved.render(console)
    changed = moved.to_dict()["relations"][STOCKS]["part_moves"]["changed"]
    assert f"{changed:,} changed part" in console.export_text()


def test_relations_without_edge_parts_have_none(versions: dict[str, Path]) -> None:
    doc = compare_bundles(versions["v1"], versions["v2"]).to_dict()
    assert doc["relations"]["shop.sells.item"]["part_moves"] is None


@pytest.mark.parametrize("seed", [1862, 1863])
def test_edge_task_parts_are_compared_too(tmp_path: Path, seed: int) -> None:
    from tests.transform.test_tasks import les_miserables_document, les_miserables_tables

    def build(out: Path, seed: int, drop: int) -> Path:
        _, tables = les_miserables_tables()
        tables["character.meets.character"] = tables["character.meets.character"].slice(drop)
        document = les_miserables_document(out, kind="edge-values")
        document["split"]["seed"] = seed  # type: ignore[index]
        spec, snapshot = publish(document, tables)
        build_bundle(spec, snapshot)
        return spec.output.bundle

    old, new = build(tmp_path / "a", 1862, 0), build(tmp_path / "b", seed, 10)
    dotted = "character.meets.character"
    entry = compare_bundles(old, new).to_dict()["relations"][dotted]
    expected = _recount(old, new, dotted)
    got = {(t["from"], t["to"]): t["count"] for t in entry["part_moves"]["transitions"]}
    assert got == expected and entry["removed"] > 0
    moved = sum(n for (a, b), n in expected.items() if a != b)
    assert entry["part_moves"]["changed"] == moved
    assert (moved == 0) if seed == 1862 else (moved > 0)
