"""Faults between the gremlin source and a real server: links cut mid-pull by a TCP relay,
pulls stopped partway and resumed, server timeouts, a server that is not there."""

from __future__ import annotations

import json

import pytest
import yaml
from gremlin_helpers import DEAD_RELATIONS, DEAD_TYPES, digests, drop_labels, gremlin_spec, vertex
from gremlin_helpers import write_graph as write

from graphmill.cli import main
from graphmill.connectors import open_source
from graphmill.errors import SourceTimeoutError, SourceUnavailableError
from graphmill.snapshot import Snapshot, pull
from servers._base import free_port
from tests.interruptions import StopAfter

pytestmark = pytest.mark.servers
FAST_RETRIES = {"attempts": 4, "initial_wait_s": 0.01, "max_wait_s": 0.05}


def _dead_spec(folder, url, **source):
    options = {"traversal_source": "g_dead", "page_size": 500, "retries": FAST_RETRIES}
    return gremlin_spec(folder, url, DEAD_TYPES, DEAD_RELATIONS, **{**options, **source})


@pytest.fixture
def reference(relay, tmp_path):
    """Digests of an uninterrupted pull through the same relay (same URL in provenance)."""
    spec = _dead_spec(tmp_path / "reference", relay.url)
    pull(spec, open_source(spec))
    return digests(spec.output.snapshot)


def test_links_cut_mid_pull_are_retried_to_the_same_snapshot(relay, reference, tmp_path):
    relay.cut_after(60_000, times=2)
    spec = _dead_spec(tmp_path / "cut", relay.url)
    info = pull(spec, open_source(spec))
    assert relay.dropped >= 2
    # TinkerPop documentation, Grateful Dead data set: 808 vertices, 8049 edges
    assert sum(info.vertex_counts.values()) == 808
    assert sum(info.edge_counts.values()) == 8049
    assert digests(spec.output.snapshot) == reference


def test_pull_that_loses_the_server_resumes_from_its_checkpoint(relay, reference, tmp_path):
    spec = _dead_spec(tmp_path / "lost", relay.url, retries={"attempts": 2, "initial_wait_s": 0})
    relay.block_after(150_000)
    with pytest.raises(SourceUnavailableError) as caught:
        pull(spec, open_source(spec))
    assert relay.url in str(caught.value) and "\n" not in str(caught.value)
    staging = spec.output.snapshot.with_name(spec.output.snapshot.name + ".staging")
    assert any(staging.rglob("part-*.parquet"))
    assert not spec.output.snapshot.exists()  # nothing half-written
    relay.heal()
    info = pull(spec, open_source(spec))
    assert info.units_resumed >= 1
    assert sum(info.edge_counts.values()) == 8049  # none lost, none doubled
    assert digests(spec.output.snapshot) == reference


def test_pull_stopped_partway_resumes_to_the_same_snapshot(relay, reference, tmp_path):
    spec = _dead_spec(tmp_path / "stopped", relay.url, concurrency=1)
    with pytest.raises(StopAfter.StopError):
        pull(spec, open_source(spec), progress=StopAfter(5))
    info = pull(spec, open_source(spec))
    assert info.units_resumed >= 1
    assert info.pages_read < 5 + sum(-(-n // 500) for n in info.edge_counts.values()) + 3
    assert digests(spec.output.snapshot) == reference


@pytest.fixture(scope="module")
def heavy(gremlin_server):
    """30 000 vertices: enough that sorting them takes longer than a millisecond."""
    drop_labels(gremlin_server.url, ["gf_heavy"])
    write(gremlin_server.url, [vertex(f"h{i:05d}", "gf_heavy", n=i) for i in range(30_000)], [])
    yield gremlin_server
    drop_labels(gremlin_server.url, ["gf_heavy"])


def _spec_file(folder, url, **source):
    document = {
        "spec_version": 1,
        "source": {"kind": "gremlin", "url": url, **source},
        "vertex_types": {"item": {"match": "gf_heavy", "properties": {"n": {}}}},
        "output": {"bundle": str(folder / "bundle")},
    }
    path = folder / "spec.yaml"
    path.write_text(yaml.safe_dump(document))
    return path


def test_server_timeout_is_exit_code_5(heavy, tmp_path, capsys):
    path = _spec_file(
        tmp_path,
        heavy.url,
        request_timeout_s=0.001,
        retries={"attempts": 2, "initial_wait_s": 0.01},
    )
    assert main(["pull", str(path), "--no-progress"]) == 5
    message = capsys.readouterr().err.strip()
    assert message.count("\n") == 0 and "Traceback" not in message
    assert heavy.url in message and "status 598" in message


def test_server_timeout_raises_source_timeout_error(heavy, tmp_path):
    spec = gremlin_spec(
        tmp_path,
        heavy.url,
        {"item": {"match": "gf_heavy", "properties": {"n": {}}}},
        [],
        request_timeout_s=0.001,
        retries={"attempts": 1},
    )
    with pytest.raises(SourceTimeoutError):
        pull(spec, open_source(spec))


def test_no_server_is_exit_code_3(tmp_path, capsys):
    url = f"ws://127.0.0.1:{free_port()}/gremlin"
    path = _spec_file(tmp_path, url, retries={"attempts": 2, "initial_wait_s": 0})
    assert main(["pull", str(path), "--no-progress"]) == 3
    message = capsys.readouterr().err.strip()
    assert message.count("\n") == 0 and url in message and "cannot reach" in message


@pytest.fixture
def shifting(gremlin_server):
    """A small graph of its own labels in the writable ``g``, removed afterwards."""
    labels = ["gf_member", "gf_club"]
    drop_labels(gremlin_server.url, labels)
    members = [vertex(f"m{i}", "gf_member", score=i) for i in range(6)]
    write(gremlin_server.url, [*members, vertex("c1", "gf_club")], [])
    yield gremlin_server
    drop_labels(gremlin_server.url, labels)


def _shifting_spec(folder, url):
    types = {
        "member": {"match": "gf_member", "properties": {"score": {"kind": "integer"}}},
        "club": {"match": "gf_club"},
    }
    return gremlin_spec(folder, url, types, [], page_size=2, concurrency=1)


def test_resume_after_the_graph_changed_publishes_the_new_graph(shifting, tmp_path):
    spec = _shifting_spec(tmp_path, shifting.url)
    with pytest.raises(StopAfter.StopError):  # 2 of 3 pages of the members staged
        pull(spec, open_source(spec), progress=StopAfter(2))
    write(shifting.url, [vertex("m9", "gf_member", score=9)], [])
    info = pull(spec, open_source(spec))
    members = Snapshot.open(spec.output.snapshot).vertices("member").to_pylist()
    assert [m["vertex_id"] for m in members] == ["m0", "m1", "m2", "m3", "m4", "m5", "m9"]
    assert info.restarted == ["vertices.member.p000of001"]
    assert "count 6 -> 7" in info.warnings[0] and "last changed" in info.warnings[0]
    inputs = Snapshot.open(spec.output.snapshot).provenance["inputs"]
    assert inputs["vertices.member.p000of001"]["count"] == 7
    assert "m9" not in json.dumps(inputs)  # digests, not ids


def test_resume_of_an_unchanged_graph_goes_on_after_the_staged_pages(shifting, tmp_path):
    spec = _shifting_spec(tmp_path, shifting.url)
    with pytest.raises(StopAfter.StopError):
        pull(spec, open_source(spec), progress=StopAfter(2))
    info = pull(spec, open_source(spec))
    assert info.restarted == [] and info.units_resumed == 1
    assert info.pages_read == 2  # the member's third page, the club's one page
