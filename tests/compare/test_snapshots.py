"""Comparing two snapshots: counts by original ID, values changed, degrees and check findings
against independent recounts (pandas, scipy, Python sets) on hypothesis-generated pairs;
the JSON document against the shipped schema; refusals (a bundle against a snapshot, index
maps of snapshots) and an altered snapshot file, through the CLI's exit codes."""

from __future__ import annotations

import io
import json
import shutil
import tempfile
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from rich.console import Console
from scipy.stats import ks_2samp

from graphmill import compare_bundles
from graphmill._schemas import validate_document
from graphmill.cli import main
from graphmill.errors import BundleIntegrityError, ExitCode, InputError
from graphmill.spec import GateRule
from tests.compare._versions import build_version, snapshot_version

POOL = [f"p{i}" for i in range(10)] + ["ü", "€x"]
PLACES = ["home", "park", "shop", "zoo"]
scores = st.one_of(st.none(), st.sampled_from([0.5, 1.0, 2.0, -3.0, float("nan")]))
colours = st.one_of(st.none(), st.sampled_from(["red", "blue", "green"]))


@st.composite
def version(draw: Any) -> dict[str, Any]:
    # people as rows: an ID may be listed twice (the snapshot keeps both rows)
    people = draw(st.lists(st.tuples(st.sampled_from(POOL), scores, colours), max_size=12))
    places = draw(st.lists(st.sampled_from(PLACES), unique=True, max_size=4))
    pool = [*sorted({p[0] for p in people}), "ghost"]  # a dangling end stays in a snapshot
    pair = st.tuples(st.sampled_from(pool), st.sampled_from(pool))
    knows = draw(st.lists(pair, max_size=15))
    visits = draw(
        st.lists(st.tuples(st.sampled_from(pool), st.sampled_from([*PLACES, "x"])), max_size=10)
    )
    return {"people": people, "places": places, "knows": knows, "visits": visits}


def _file(snapshot: Path, kind: str, name: str) -> str:
    document = json.loads((snapshot / "snapshot.json").read_text())
    return str(
        next(t for t in document["tables"] if (t["kind"], t["name"]) == (kind, name))["file"]
    )


def _table(snapshot: Path, kind: str, name: str) -> pd.DataFrame:
    return pq.read_table(snapshot / _file(snapshot, kind, name)).to_pandas()


def _first_rows(snapshot: Path, vertex_type: str) -> pd.DataFrame:
    # a build keeps the first row of each ID (in the snapshot's row order)
    return _table(snapshot, "vertices", vertex_type).drop_duplicates("vertex_id", keep="first")


def _person_rows(snapshot: Path) -> list[dict[str, Any]]:
    """The first row of each person ID, as Python values (None for null, nan for NaN)."""
    first = _first_rows(snapshot, "person").index.to_numpy()  # row positions
    table = pq.read_table(snapshot / _file(snapshot, "vertices", "person"))
    return table.take(first).to_pylist()


def _same(x: Any, y: Any) -> bool:
    """Null equals only null; NaN equals NaN (the README's rule for values changed)."""
    if x is None or y is None:
        return x is None and y is None
    return bool(x == y or (x != x and y != y))


def _multiset_kept(a: pd.DataFrame, b: pd.DataFrame) -> int:
    ca = a.value_counts().rename("a").reset_index()
    cb = b.value_counts().rename("b").reset_index()
    both = ca.merge(cb, on=["source_id", "target_id"], how="inner")
    return int(both[["a", "b"]].min(axis=1).sum()) if len(both) else 0


def _degrees(edges: pd.DataFrame, column: str, ids: pd.Series) -> np.ndarray:
    counted = edges[column].value_counts()
    return np.array([int(counted.get(i, 0)) for i in ids], dtype=np.int64)


def _check_against_recounts(a: Path, b: Path, doc: dict[str, Any]) -> None:
    validate_document("comparison", doc)
    assert doc["compared"] == "snapshots" and doc["label"] is None
    for vt in ("person", "place"):
        va, vb = _first_rows(a, vt), _first_rows(b, vt)
        joined = va.merge(vb, on="vertex_id", how="outer", indicator=True)
        e = doc["vertex_types"][vt]
        assert (e["old"], e["new"]) == (len(va), len(vb))
        assert e["kept"] == int((joined["_merge"] == "both").sum())
        assert e["removed"] == int((joined["_merge"] == "left_only").sum())
        assert e["added"] == int((joined["_merge"] == "right_only").sum())
        assert e["part_moves"] is None
    # values in plain Python: pandas would fold a null and a NaN into one missing value
    rows = [{r["vertex_id"]: r for r in _person_rows(x)} for x in (a, b)]
    for prop in ("score", "colour"):
        differs = sum(
            not _same(rows[0][i][prop], rows[1][i][prop]) for i in set(rows[0]) & set(rows[1])
        )
        assert doc["vertex_types"]["person"]["values_changed"][prop] == differs
    for dotted, (s, t) in {
        "person.knows.person": ("person", "person"),
        "person.visits.place": ("person", "place"),
    }.items():
        ea, eb = (_table(x, "edges", dotted)[["source_id", "target_id"]] for x in (a, b))
        e = doc["relations"][dotted]
        kept_edges = _multiset_kept(ea, eb)
        assert (e["old"], e["new"], e["kept"]) == (len(ea), len(eb), kept_edges)
        assert e["added"] == len(eb) - kept_edges and e["removed"] == len(ea) - kept_edges
        for side, column, vt in (("out", "source_id", s), ("in", "target_id", t)):
            da = _degrees(ea, column, _first_rows(a, vt)["vertex_id"])
            db = _degrees(eb, column, _first_rows(b, vt)["vertex_id"])
            d = e["degree"][side]
            if len(da) and len(db):
                # scipy.stats.ks_2samp(...).statistic, the reference
                assert d["ks"] == pytest.approx(ks_2samp(da, db).statistic, abs=1e-6)
                assert (d["old_max"], d["new_max"]) == (int(da.max()), int(db.max()))
            else:
                assert d["ks"] is None


@given(version(), version())
@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
def test_snapshot_counts_equal_pandas_recounts(old: dict[str, Any], new: dict[str, Any]) -> None:
    with tempfile.TemporaryDirectory() as folder:
        a = snapshot_version(Path(folder) / "a", **old)
        b = snapshot_version(Path(folder) / "b", **new)
        result = compare_bundles(a, b)
        _check_against_recounts(a, b, result.to_dict())
        assert result.index_maps == {} and result.to_dict()["findings"] is None
        shown = io.StringIO()
        result.render(Console(file=shown, width=200))
        assert "not compared (no check report beside both snapshots)" in shown.getvalue()


OLD = {
    "people": [("p1", 1.0, "red"), ("p2", 2.0, "blue"), ("p2", 9.0, "teal"), ("p3", None, "red")],
    "places": ["home", "park"],
    "knows": [("p1", "p2"), ("p2", "p1"), ("p3", "p3"), ("p3", "ghost")],
    "visits": [("p1", "home"), ("p2", "zoo")],
}
NEW = {
    "people": [("p2", 2.5, "blue"), ("p3", None, "red"), ("p4", 4.0, "blue")],
    "places": ["home", "park", "shop"],
    "knows": [("p2", "p1"), ("p3", "p3"), ("p3", "p3"), ("p4", "p2")],
    "visits": [("p4", "shop"), ("p2", "zoo")],
}


@pytest.fixture(scope="module")
def reported(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    root = tmp_path_factory.mktemp("snapshots")
    return (
        snapshot_version(root / "a", **OLD, report=True),
        snapshot_version(root / "b", **NEW, report=True),
    )


def _finding_keys(snapshot: Path) -> set[tuple[str, str]]:
    report = json.loads(Path(f"{snapshot}.report.json").read_text())
    return {(f["rule"], json.dumps(f["subject"], sort_keys=True)) for f in report["findings"]}


def test_findings_from_the_check_reports(reported) -> None:
    a, b = reported
    doc = compare_bundles(a, b).to_dict()
    _check_against_recounts(a, b, doc)
    before, after = _finding_keys(a), _finding_keys(b)
    assert before  # the old snapshot repeats p2 and points at a ghost: there is something
    keys = {
        side: {(f["rule"], json.dumps(f["subject"], sort_keys=True)) for f in doc["findings"][side]}
        for side in ("appeared", "disappeared")
    }
    assert keys["appeared"] == after - before and keys["disappeared"] == before - after
    # the hand count of this pair: p1 gone, p4 new; p2's first row changed score
    person = doc["vertex_types"]["person"]
    assert (person["old"], person["new"], person["kept"]) == (3, 3, 2)
    assert person["values_changed"] == {"score": 1, "colour": 0}


def test_a_stale_report_is_left_out(reported, tmp_path: Path) -> None:
    a, b = reported
    other = snapshot_version(tmp_path / "c", **{**NEW, "visits": []})
    shutil.copy(f"{b}.report.json", f"{other}.report.json")  # describes other tables
    assert compare_bundles(a, other).to_dict()["findings"] is None


def test_gate_cli_and_refusals(reported, tmp_path: Path, capsys) -> None:
    a, b = reported
    rules = {"vertices-removed": GateRule(0.2, "error")}
    assert not compare_bundles(a, b, rules=rules).passed  # 1 of 3 people gone
    assert main(["compare", str(a), str(b)]) == 0  # the terminal summary
    summary = capsys.readouterr().out
    assert "snapshots, matched by vertex_id" in summary and "check findings:" in summary
    assert main(["compare", str(a), str(b), "--json"]) == 0
    printed = json.loads(capsys.readouterr().out)
    validate_document("comparison", printed)
    assert printed["old"] == {"name": "testgraph", "snapshot": str(a)}
    bundle = build_version(tmp_path / "built", {"p1": (1.0, "red")}, ["home"], [], [])
    with pytest.raises(InputError, match=r"is a snapshot, but .* is a bundle"):
        compare_bundles(bundle, a)
    for argv in (
        ["compare", str(a), str(bundle)],
        ["compare", str(a), str(b), "--index-maps", str(tmp_path / "maps")],
    ):
        assert main(argv) == ExitCode.BAD_INPUT == 2
        err = capsys.readouterr().err.strip().splitlines()
        assert len(err) == 1 and "Traceback" not in err[0]
    assert not (tmp_path / "maps").exists()


def test_an_altered_snapshot_file_fails(reported, tmp_path: Path, capsys) -> None:
    a, b = reported
    altered = tmp_path / "b"
    shutil.copytree(b, altered)
    document = json.loads((altered / "snapshot.json").read_text())
    name = next(t["file"] for t in document["tables"] if t["kind"] == "edges")
    data = bytearray((altered / name).read_bytes())
    data[len(data) // 2] ^= 0xFF
    (altered / name).write_bytes(bytes(data))
    with pytest.raises(BundleIntegrityError, match=r"differs from snapshot\.json") as caught:
        compare_bundles(a, altered)
    assert caught.value.file == str(altered / name)
    capsys.readouterr()
    assert main(["compare", str(a), str(altered)]) == ExitCode.BUNDLE_CORRUPT
    assert len(capsys.readouterr().err.strip().splitlines()) == 1
