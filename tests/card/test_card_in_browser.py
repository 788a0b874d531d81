"""The dataset card, rendered by headless Chromium: it loads with no console errors and no
network request, every plot has drawn marks inside its box on a screenshot, and every number
tagged on the page equals the manifest's."""

from __future__ import annotations

import io
import json
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pytest
from PIL import Image

from graphmill.card import CARD_FILE, write_card
from graphmill.snapshot import Snapshot
from graphmill.spec import spec_from_dict
from graphmill.transform import build_bundle
from tests.compare._versions import KEEP_ALL, edge_table, people_table
from tests.transform._snapshots import publish, spec_document

WIDTH = 1280


def _version(root: Path, n: int, shift: float, previous: Path | None = None) -> Path:
    people = {
        f"p{i:03d}": (float(i % 13) + shift, ["red", "blue", "green"][i % 3]) for i in range(n)
    }
    ids = sorted(people)
    document = spec_document(
        root,
        {
            "person": {"properties": {"score": {"kind": "float"}, "colour": {"kind": "string"}}},
            "place": {},
        },
        [
            {"from": "person", "name": "knows", "to": "person"},
            {"from": "person", "name": "visits", "to": "place"},
        ],
        edges=KEEP_ALL,
        features={"person": [{"property": "score", "encoding": "standardize"}]},
        label={"vertex_type": "person", "property": "colour"},
        split={"method": "stratified", "fractions": {"train": 0.6, "validation": 0.2, "test": 0.2}},
        purpose="Predict a person's colour from whom they know.",
    )
    knows = [(ids[i], ids[(i * 7 + 3) % n]) for i in range(n)] + [
        (ids[0], ids[i]) for i in range(1, n, 3)
    ]
    visits = [(ids[i], ["home", "park"][i % 2]) for i in range(0, n, 2)]
    tables = {
        "person": people_table(people),
        "place": pa.table({"vertex_id": pa.array(["home", "park"], pa.string())}),
        "person.knows.person": edge_table(knows),
        "person.visits.place": edge_table(visits),
    }
    publish(document, tables)
    spec = spec_from_dict(document)
    summary = {
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
    build_bundle(
        spec, Snapshot.open(spec.output.snapshot), checks_summary=summary, previous=previous
    )
    return spec.output.bundle


@pytest.fixture(scope="module")
def bundles(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    root = tmp_path_factory.mktemp("card")
    first = _version(root / "v1", 90, 0.0)
    return first, _version(root / "v2", 120, 4.0, previous=first)


def _lookup(document: Any, path: str) -> Any:
    for part in path.split("/"):
        document = document[int(part)] if isinstance(document, list) else document[part]
    return document


def _inspect(chromium: Any, card: Path) -> dict[str, Any]:
    tab = chromium.open(card.resolve().as_uri())
    try:
        png = tab.screenshot(WIDTH)
        boxes = tab.evaluate(
            "[...document.querySelectorAll('svg.plot')].map(s => { const r = "
            "s.getBoundingClientRect(); return {id: s.dataset.plot, x: r.left + scrollX, "
            "y: r.top + scrollY, w: r.width, h: r.height}; })"
        )
        numbers = tab.evaluate(
            "[...document.querySelectorAll('[data-manifest]')].map(e => "
            "[e.dataset.manifest, e.innerText])"
        )
        return {
            "png": png,
            "boxes": boxes,
            "numbers": numbers,
            "problems": tab.problems(),
            "urls": tab.requested_urls(),
        }
    finally:
        tab.close()


@pytest.mark.parametrize("which", ["built", "on-demand"])
def test_card_renders_every_plot_and_the_manifest_numbers(
    chromium, bundles, which: str, tmp_path: Path
) -> None:
    _, new = bundles
    card = new / CARD_FILE if which == "built" else write_card(new, tmp_path / "card.html")
    manifest = json.loads((new / "manifest.json").read_text())
    seen = _inspect(chromium, card)
    assert seen["problems"] == []
    assert all(u.startswith(("file:", "data:", "about:")) for u in seen["urls"]), seen["urls"]
    image = np.asarray(Image.open(io.BytesIO(seen["png"])).convert("RGB")).astype(np.int16)
    # plots: one per relation, class balance, one per feature property
    expected = {f"degree-{r}" for r in manifest["relations"]} | {
        "class-balance",
        "feature-person.score",
    }
    assert {b["id"] for b in seen["boxes"]} == expected
    for box in seen["boxes"]:
        x, y, w, h = (round(box[k]) for k in ("x", "y", "w", "h"))
        assert w > 100 and h > 100, box
        crop = image[y : y + h, x : x + w]
        assert crop.shape[:2] == (h, w), box  # the box lies inside the screenshot
        # drawn marks: saturated pixels (the axes, grid and text are grey; the page is white)
        saturated = (crop.max(axis=2) - crop.min(axis=2)) > 60
        assert saturated.sum() > 50, (box["id"], int(saturated.sum()))
    tagged = dict(seen["numbers"])
    assert {
        "counts/vertices/person",
        "counts/edges/person.knows.person",
        "split/sizes/train",
        "validation/counts/warning",
        "comparison/vertex_types/person/added",
    } <= set(tagged)
    shares = [p for p in tagged if p.startswith("split/achieved_shares/")]
    assert len(shares) == 3 * len(manifest["split"]["achieved_shares"]) > 0
    for path, text in tagged.items():
        assert _equal(text, _lookup(manifest, path)), path


def test_the_built_card_is_hashed_and_shows_the_comparison(bundles) -> None:
    old, new = bundles
    manifest = json.loads((new / "manifest.json").read_text())
    assert CARD_FILE in {f["path"] for f in manifest["files"]}
    html = (new / CARD_FILE).read_text()
    assert "Changes since the previous version" in html
    assert manifest["lineage"]["previous_manifest_sha256"] in html
    moves = [
        f for f in manifest["leakage"]["findings"] if f["rule"] == "part-changed-since-previous"
    ]
    comparison = manifest["comparison"]["vertex_types"]["person"]["part_moves"]
    assert [f["count"] for f in moves] == [comparison["changed"]] and moves[0]["count"] > 0
    assert "part-changed-since-previous" in html  # a stratified boundary moved with growth
    assert (
        "Personal data" in html
        and "<script" not in html
        and "http://" not in html.replace('xmlns="http://www.w3.org/2000/svg"', "")
    )
    assert "Changes since" not in (old / CARD_FILE).read_text()


def _links_bundle(root: Path) -> Path:
    """A links task on the shop graph of the leakage tests (a parallel relation, so the audit
    has a finding), with an encoded edge property on the split relation."""
    from tests.transform.test_leakage import shop_document, shop_tables

    tables = shop_tables()
    stocks = tables["shop.stocks.item"]
    amounts = pa.array([float(i % 7) for i in range(stocks.num_rows)], pa.float64())
    tables["shop.stocks.item"] = stocks.append_column("amount", amounts)
    document = shop_document(root)
    document["relations"][0]["properties"] = {"amount": {"kind": "float"}}
    document["edge_features"] = {
        "shop.stocks.item": [{"property": "amount", "encoding": "standardize"}]
    }
    spec, snapshot = publish(document, tables)
    build_bundle(spec, snapshot)
    return spec.output.bundle


def _equal(text: str, value: Any) -> bool:
    shown = float(text.replace(",", ""))
    if isinstance(value, int):
        return shown == value
    return shown == pytest.approx(value, rel=1e-3, abs=1e-4)  # the card shows 4 digits


def test_the_card_shows_the_task_edge_parts_leakage_and_edge_features(
    chromium, tmp_path: Path
) -> None:
    bundle = _links_bundle(tmp_path / "links")
    manifest = json.loads((bundle / "manifest.json").read_text())
    seen = _inspect(chromium, bundle / CARD_FILE)
    assert seen["problems"] == []
    tagged = dict(seen["numbers"])
    stocks = "relations/shop.stocks.item"
    expected = {
        f"{stocks}/link_split/sizes/{p}"
        for p in manifest["relations"]["shop.stocks.item"]["link_split"]["sizes"]
        if p in ("train", "validation", "test")
    } | {"leakage/findings/0/count", "leakage/findings/0/denominator", f"{stocks}/features/width"}
    assert expected <= set(tagged), sorted(tagged)
    for path, text in tagged.items():
        assert _equal(text, _lookup(manifest, path)), path
    html = (bundle / CARD_FILE).read_text()
    finding = manifest["leakage"]["findings"][0]
    assert finding["rule"] in html and "Link prediction on" in html
    sample = finding["sample"][0]
    assert f"source={sample['source']}" in html  # a sample row, not a raw dict
    assert "{'" not in html and '{"' not in html


def test_an_edge_task_card_shows_its_edge_parts(chromium, tmp_path: Path) -> None:
    from tests.transform.test_tasks import les_miserables_document, les_miserables_tables

    _, tables = les_miserables_tables()
    spec, snapshot = publish(les_miserables_document(tmp_path, kind="edge-values"), tables)
    build_bundle(spec, snapshot)
    manifest = json.loads((spec.output.bundle / "manifest.json").read_text())
    seen = _inspect(chromium, spec.output.bundle / CARD_FILE)
    assert seen["problems"] == []
    tagged = dict(seen["numbers"])
    parts = "relations/character.meets.character/parts/sizes"
    assert {f"{parts}/{p}" for p in ("train", "validation", "test")} <= set(tagged)
    for path, text in tagged.items():
        assert _equal(text, _lookup(manifest, path)), path
    assert "edge-values" in (spec.output.bundle / CARD_FILE).read_text()
