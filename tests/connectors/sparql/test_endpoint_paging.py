"""Paging on real servers: every strategy gives the same snapshot; truncated answers are
caught; a dropped connection is retried or resumed to the identical snapshot."""

from __future__ import annotations

import json
from pathlib import Path
from urllib.parse import urlsplit

import pytest
import sparql_cases as cases
from sparql_fakes import CappingProxy, CuttingRelay
from sparql_helpers import endpoint, pull_spec, small_spec_doc, snapshot_files

from graphmill.connectors import open_source
from graphmill.connectors.base import WorkUnit
from graphmill.errors import GraphmillError, MalformedResponseError, SourceUnavailableError
from graphmill.snapshot import Snapshot
from graphmill.spec import spec_from_dict

pytestmark = pytest.mark.servers
P = cases.PAGING_NS
THINGS, BLANKS = 700, 40  # paging_ntriples() defaults


def _doc(source: dict, out: Path) -> dict:
    return small_spec_doc(source, out, namespace=P)


def _without_blanks(root: Path) -> dict[str, list[dict]]:
    snap = Snapshot.open(root)
    things = [r for r in snap.vertices("thing").to_pylist() if not r["vertex_id"].startswith("_:")]
    edges = [
        e
        for e in snap.edges(snap.relations[0]).to_pylist()
        if not (e["source_id"].startswith("_:") or e["target_id"].startswith("_:"))
    ]
    return {"things": things, "edges": edges}


@pytest.fixture(scope="module")
def reference(case_oxigraph, tmp_path_factory) -> Path:
    """The paging dataset pulled from Oxigraph in one unpaged query per unit."""
    out = tmp_path_factory.mktemp("reference")
    pull_spec(_doc(endpoint(case_oxigraph.query_url, paging="single-stream"), out))
    return out / "snapshot"


@pytest.mark.parametrize(
    ("paging", "page_size"),
    [("key-range", 60), ("key-range", 20), ("offset", 250), ("single-stream", 10)],
)
@pytest.mark.parametrize("map_rows", [16_384, 7], ids=["one-slice-per-page", "slices"])
def test_strategies_agree_on_one_server(
    case_server, tmp_path, paging, page_size, map_rows, monkeypatch
):
    # map_rows 7: each page is mapped in slices of about 7 rows and joined (_building)
    whole = tmp_path / "whole"
    pull_spec(_doc(endpoint(case_server.query_url, paging="single-stream"), whole))
    monkeypatch.setattr("graphmill.connectors.sparql._building.MAP_ROWS", map_rows)
    _, info = pull_spec(
        _doc(
            endpoint(case_server.query_url, paging=paging, page_size=page_size), tmp_path / "paged"
        )
    )
    assert snapshot_files(tmp_path / "paged" / "snapshot") == snapshot_files(whole / "snapshot")
    things = Snapshot.open(whole / "snapshot").vertices("thing")
    assert things.num_rows == THINGS + BLANKS
    assert sum(v.startswith("_:") for v in things["vertex_id"].to_pylist()) == BLANKS
    if paging == "key-range":
        assert info.pages_read > 4 * (THINGS + BLANKS) // max(page_size, 60)


def test_servers_and_dump_agree_on_iris(case_server, case_files, tmp_path, reference):
    pull_spec(_doc(endpoint(case_server.query_url, page_size=50), tmp_path / "s"))
    pull_spec(_doc({"kind": "rdf-file", "paths": [str(case_files["paging"])]}, tmp_path / "d"))
    ours = _without_blanks(tmp_path / "s" / "snapshot")
    assert ours == _without_blanks(tmp_path / "d" / "snapshot") == _without_blanks(reference)
    assert len(ours["things"]) == THINGS


def test_a_capped_server_is_detected_and_paged_around(case_oxigraph, tmp_path, reference):
    with CappingProxy(case_oxigraph.query_url, cap=1000) as proxy:
        pull_spec(_doc(endpoint(proxy.url), tmp_path / "ranges"))
        assert proxy.cut_results >= 1  # the label unit (1400 rows) was cut at first
        pull_spec(_doc(endpoint(proxy.url, paging="offset", page_size=5000), tmp_path / "offset"))
    for name in ("ranges", "offset"):
        assert snapshot_files(tmp_path / name / "snapshot") == snapshot_files(reference)


def test_a_capped_single_stream_stops_with_a_clear_error(case_oxigraph, tmp_path):
    words = "exactly 1000 rows but holds more"
    with (
        CappingProxy(case_oxigraph.query_url, cap=1000) as proxy,
        pytest.raises(MalformedResponseError, match=words) as e,
    ):
        pull_spec(_doc(endpoint(proxy.url, paging="single-stream"), tmp_path))
    assert e.value.exit_code == 7
    assert not (tmp_path / "snapshot").exists()


def _through(relay: CuttingRelay, url: str) -> str:
    parts = urlsplit(url)
    return parts._replace(netloc=f"127.0.0.1:{relay.port}").geturl()


@pytest.mark.parametrize("paging", ["single-stream", "key-range"])
def test_a_dropped_connection_is_retried(case_server, tmp_path, paging):
    whole = tmp_path / "whole"
    pull_spec(_doc(endpoint(case_server.query_url, paging="single-stream"), whole))
    port = urlsplit(case_server.query_url).port
    with CuttingRelay(port, after_bytes=30_000, cuts=2) as relay:
        source = endpoint(
            _through(relay, case_server.query_url),
            paging=paging,
            page_size=100,
            retries={"attempts": 4, "initial_wait_s": 0.01, "max_wait_s": 0.1},
        )
        pull_spec(_doc(source, tmp_path / "cut"))
    assert relay.cuts_done == 2
    assert snapshot_files(tmp_path / "cut" / "snapshot") == snapshot_files(whole / "snapshot")


def _half_done_units(staging: Path) -> list[str]:
    states = {
        p.parent.name: json.loads(p.read_text()) for p in staging.glob("units/*/checkpoint.json")
    }
    return [name for name, state in states.items() if state["pages"] and not state["done"]]


@pytest.mark.parametrize("paging", ["single-stream", "key-range"])
def test_a_pull_cut_off_resumes_to_the_identical_snapshot(
    case_server, tmp_path, paging, monkeypatch
):
    if case_server.kind == "virtuoso" and paging == "single-stream":
        pytest.skip("Virtuoso answers JSON, parsed whole: a cut unit stages nothing to resume")
    # parse the streamed answers in small pieces, so pages are staged before the cut
    monkeypatch.setattr("graphmill.connectors.sparql._http.PIECE_BYTES", 2048)
    # and map them in slices smaller than a page, so a page is several slices joined
    monkeypatch.setattr("graphmill.connectors.sparql._building.MAP_ROWS", 13)
    full = tmp_path / "full"
    _, whole = pull_spec(_doc(endpoint(case_server.query_url, paging=paging, page_size=100), full))
    port = urlsplit(case_server.query_url).port
    # Where a cut lands depends on the bytes each server sends (JSON or TSV, the fingerprint
    # and sample queries before a unit's pages): try a few cut points and keep the first one
    # that stops the pull in the middle of a unit, which is the case under test.
    for after_bytes in (60_000, 45_000, 75_000, 30_000, 90_000):
        cut = tmp_path / f"cut-{after_bytes}"
        with CuttingRelay(port, after_bytes=after_bytes, cuts=1) as relay:
            source = endpoint(
                _through(relay, case_server.query_url),
                paging=paging,
                page_size=100,
                retries={"attempts": 1},
            )
            doc = _doc(source, cut)
            with pytest.raises(SourceUnavailableError, match="broke off") as failure:
                pull_spec(doc)
            assert failure.value.exit_code == 3 and relay.cuts_done == 1
            assert not (cut / "snapshot").exists()
            if not _half_done_units(cut / "snapshot.staging"):
                continue  # the cut fell between two units: try another point
            _, resumed = pull_spec(doc)  # the relay passes everything now
        break
    else:
        pytest.fail("no cut point stopped the pull in the middle of a unit")
    assert resumed.units_resumed >= 1
    assert resumed.pages_read < whole.pages_read
    assert snapshot_files(cut / "snapshot") == snapshot_files(full / "snapshot")


def test_a_stream_in_another_order_is_not_resumed(case_oxigraph, tmp_path):
    spec = spec_from_dict(
        _doc(endpoint(case_oxigraph.query_url, paging="single-stream", page_size=100), tmp_path)
    )
    unit = WorkUnit("vertices", "thing", facet="label")
    with open_source(spec) as source:
        pages = list(source.read(unit))
        assert len(pages) > 3
        again = list(source.read(unit, pages[1].cursor))  # resuming as the stager would
        assert sum(p.batch.num_rows for p in pages[2:]) == sum(p.batch.num_rows for p in again)
        state = json.loads(pages[1].cursor)
        forged = json.dumps({**state, "digest": "0" * 64})
        with pytest.raises(GraphmillError, match="cannot resume") as info:
            list(source.read(unit, forged))
    assert "key-range" in info.value.one_line() and info.value.exit_code == 3


def test_a_unit_goes_on_with_the_strategy_it_was_started_with(case_oxigraph, tmp_path):
    def spec(**options):
        return spec_from_dict(
            _doc(endpoint(case_oxigraph.query_url, page_size=100, **options), tmp_path)
        )

    unit = WorkUnit("edges", "thing.linked.thing")
    with open_source(spec(paging="key-range")) as source:
        pages = list(source.read(unit))
    assert len(pages) > 3
    with open_source(spec()) as source:
        assert source.paging == "single-stream"  # what auto picks on Oxigraph
        rest = list(source.read(unit, pages[1].cursor))
    assert sum(p.batch.num_rows for p in rest) == sum(p.batch.num_rows for p in pages[2:])
    assert all(json.loads(p.cursor)["paging"] == "key-range" for p in rest)
