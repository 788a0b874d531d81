"""Links tasks end to end, with brute-force recounts against networkx graphs (karate club,
Les Misérables, a networkx bipartite generator) and pandas' own date arithmetic."""

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

from graphmill.bundle import GraphBundle, load_bundle, seal_manifest
from graphmill.errors import BundleIntegrityError, SpecError
from graphmill.spec import RelationKey
from graphmill.transform import build_bundle

from ._snapshots import bundle_bytes, publish, spec_document

PARTS = ("train", "validation", "test")
KNOWS = RelationKey("person", "knows", "person")


def undirected_tables(graph: nx.Graph, times: dict[Any, datetime] | None = None) -> dict:
    edges = list(graph.edges)
    columns: dict[str, Any] = {
        "source_id": [str(u) for u, _ in edges],
        "target_id": [str(v) for _, v in edges],
    }
    if times is not None:
        columns["since"] = pa.array([times[e] for e in edges], pa.timestamp("us", tz="UTC"))
    return {
        "person": pa.table({"vertex_id": sorted(str(n) for n in graph)}),
        "person.knows.person": pa.table(columns),
    }


def undirected_document(out: Path, timed: bool = False, **task: Any) -> dict[str, Any]:
    props = {"since": {"kind": "datetime"}} if timed else {}
    return spec_document(
        out,
        {"person": {}},
        [
            {
                "from": "person",
                "name": "knows",
                "to": "person",
                "undirected": True,
                "properties": props,
            }
        ],
        task={"kind": "links", "relations": ["person.knows.person"], **task},
        split={"seed": 42, "fractions": {"train": 0.7, "validation": 0.15, "test": 0.15}},
    )


def named_pairs(bundle: GraphBundle, key: RelationKey) -> list[tuple[str, str]]:
    src = bundle.vertex_table(key.source_type).column("vertex_id").to_pylist()
    dst = bundle.vertex_table(key.target_type).column("vertex_id").to_pylist()
    ends = bundle.relations[key].endpoints.numpy()
    return [(src[s], dst[t]) for s, t in ends.T]


def part_of_edges(bundle: GraphBundle, key: RelationKey) -> np.ndarray:
    rel = bundle.relations[key]
    out = np.full(rel.count, None, dtype=object)
    for p in PARTS:
        positions = rel.parts[p].numpy()
        assert (np.diff(positions) > 0).all()  # sorted, no repeats
        assert (out[positions] == None).all()  # noqa: E711 - in one part only
        out[positions] = p
    return out


def test_karate_links_parts_roles_and_negatives(tmp_path: Path) -> None:
    graph = nx.karate_club_graph()  # networkx.karate_club_graph (Zachary 1977): 34 x 78
    document = undirected_document(
        tmp_path,
        supervision_share=0.3,
        negatives={"per_positive": 3, "parts": ["train", "validation", "test"]},
    )
    spec, snapshot = publish(document, undirected_tables(graph))
    build_bundle(spec, snapshot)
    first = bundle_bytes(spec.output.bundle)
    build_bundle(spec, snapshot)
    assert bundle_bytes(spec.output.bundle) == first  # byte-identical rebuild
    bundle = load_bundle(spec.output.bundle)
    rel = bundle.relations[KNOWS]
    assert rel.count == 2 * 78
    pairs = named_pairs(bundle, KNOWS)
    part_of = part_of_edges(bundle, KNOWS)
    assert all(part_of != None)  # noqa: E711 - every edge has a part
    seen: dict[frozenset[str], str] = {}
    for pair, part in zip(pairs, part_of, strict=True):
        assert seen.setdefault(frozenset(pair), part) == part  # both directions, one part
    message, supervision = rel.parts["message"].numpy(), rel.parts["supervision"].numpy()
    train = rel.parts["train"].numpy()
    assert set(message).isdisjoint(supervision)
    assert sorted([*message, *supervision]) == train.tolist()
    entry = bundle.manifest["relations"]["person.knows.person"]["link_split"]
    assert entry["sizes"]["message"] == len(message) and entry["without_part"] == 0
    vertices = bundle.vertex_table("person").column("vertex_id").to_pylist()
    ends = rel.endpoints.numpy()
    for part in PARTS:
        positives = supervision if part == "train" else rel.parts[part].numpy()
        negatives = rel.negatives[part].numpy()
        assert negatives.shape == (2, 3 * len(positives))
        assert (negatives[0] == np.repeat(ends[0, positives], 3)).all()
        for s, t in negatives.T:  # against the full positive set of networkx's graph
            assert not graph.has_edge(int(vertices[s]), int(vertices[t]))
        assert entry["negatives"]["counts"][part] == negatives.shape[1]


def test_unseen_vertices_touch_no_train_edge(tmp_path: Path) -> None:
    graph = nx.les_miserables_graph()  # networkx: Knuth's co-appearances, 77 x 254
    spec, snapshot = publish(
        undirected_document(tmp_path, unseen_vertices=True), undirected_tables(graph)
    )
    build_bundle(spec, snapshot)
    bundle = load_bundle(spec.output.bundle)
    rel = bundle.relations[KNOWS]
    ends = rel.endpoints.numpy()
    in_train = set(ends[:, rel.parts["train"].numpy()].ravel().tolist())
    for part in ("validation", "test"):
        positions = rel.parts[part].numpy()
        assert len(positions) > 0
        for s, t in ends[:, positions].T:
            assert s not in in_train or t not in in_train


def test_temporal_cuts_match_pandas(tmp_path: Path) -> None:
    graph = nx.les_miserables_graph()  # networkx
    rnd = random.Random(1832)
    start = datetime(2020, 1, 1, tzinfo=UTC)
    times = {e: start + timedelta(hours=rnd.randrange(0, 24 * 900)) for e in graph.edges}
    tables = undirected_tables(graph, times)
    by_pair = {frozenset(e): t for e, t in times.items()}
    stamps = pd.Series(sorted(times.values()))  # pandas' own arithmetic from here on
    for cuts, (low, high) in [
        (
            (0.6, 0.8),
            (
                stamps.quantile(0.6, interpolation="lower"),
                stamps.quantile(0.8, interpolation="lower"),
            ),
        ),
        (
            ("2021-06-01", "2022-01-15T12:00"),
            (pd.Timestamp("2021-06-01", tz="UTC"), pd.Timestamp("2022-01-15T12:00", tz="UTC")),
        ),
    ]:
        out = tmp_path / str(cuts[0])
        document = undirected_document(
            out,
            timed=True,
            by_time={"property": "since", "validation_from": cuts[0], "test_from": cuts[1]},
        )
        spec, snapshot = publish(document, tables)
        build_bundle(spec, snapshot)
        bundle = load_bundle(spec.output.bundle)
        part_of = part_of_edges(bundle, KNOWS)
        for (s, t), part in zip(named_pairs(bundle, KNOWS), part_of, strict=True):
            when = pd.Timestamp(by_pair[frozenset((s, t))])
            expected = "train" if when < low else "validation" if when < high else "test"
            assert part == expected
        recorded = bundle.manifest["relations"]["person.knows.person"]["link_split"]["by_time"]
        assert pd.Timestamp(recorded["validation_from"]) == low
        assert pd.Timestamp(recorded["test_from"]) == high


def bipartite_document(out: Path, **task: Any) -> dict[str, Any]:
    return spec_document(
        out,
        {"shop": {}, "item": {}},
        [{"from": "shop", "name": "stocks", "to": "item"}],
        task={"kind": "links", "relations": ["shop.stocks.item"], **task},
        edges={"add_reverse": True},
    )


def bipartite_tables(graph: nx.Graph) -> dict[str, pa.Table]:
    left = sorted(n for n, side in graph.nodes(data="bipartite") if side == 0)
    right = sorted(n for n, side in graph.nodes(data="bipartite") if side == 1)
    rows = [(u, v) if u in left else (v, u) for u, v in graph.edges]
    return {
        "shop": pa.table({"vertex_id": [f"s{n:03d}" for n in left]}),
        "item": pa.table({"vertex_id": [f"i{n:03d}" for n in right]}),
        "shop.stocks.item": pa.table(
            {
                "source_id": [f"s{u:03d}" for u, _ in rows],
                "target_id": [f"i{v:03d}" for _, v in rows],
            }
        ),
    }


def test_reverse_of_an_evaluation_edge_is_never_trained_on(tmp_path: Path) -> None:
    graph = nx.bipartite.random_graph(30, 40, 0.15, seed=7)  # networkx.bipartite generator
    spec, snapshot = publish(
        bipartite_document(tmp_path, negatives={"per_positive": 2, "sampling": "by-degree"}),
        bipartite_tables(graph),
    )
    build_bundle(spec, snapshot)
    bundle = load_bundle(spec.output.bundle)
    forward = RelationKey("shop", "stocks", "item")
    reverse = RelationKey("item", "rev_stocks", "shop")
    part_fwd = dict(zip(named_pairs(bundle, forward), part_of_edges(bundle, forward), strict=True))
    part_rev = part_of_edges(bundle, reverse)
    for (i, s), part in zip(named_pairs(bundle, reverse), part_rev, strict=True):
        assert part_fwd[(s, i)] == part
    assert bundle.relations[reverse].negatives == {}
    rel = bundle.relations[forward]
    train_degree = np.bincount(rel.endpoints.numpy()[1, rel.parts["train"].numpy()], minlength=40)
    shops = bundle.vertex_table("shop").column("vertex_id").to_pylist()
    items = bundle.vertex_table("item").column("vertex_id").to_pylist()
    positives = set(part_fwd)
    for part in ("validation", "test"):
        negatives = rel.negatives[part].numpy()
        assert negatives.shape[1] == 2 * len(rel.parts[part])
        assert negatives[0].max() < len(shops) and negatives[1].max() < len(items)
        assert (train_degree[negatives[1]] > 0).all()  # by-degree: never a degree-0 item
        assert not positives & {(shops[s], items[t]) for s, t in negatives.T}


def test_parts_stay_put_when_5_percent_changes(tmp_path: Path) -> None:
    graph = nx.les_miserables_graph()  # networkx
    rnd = random.Random(99)
    changed = graph.copy()
    changed.remove_nodes_from(rnd.sample(sorted(graph.nodes), len(graph) // 20))
    changed.remove_edges_from(rnd.sample(sorted(changed.edges), graph.number_of_edges() // 20))
    for i in range(len(graph) // 20):
        changed.add_edge(f"Newcomer{i}", rnd.choice(sorted(graph.nodes)))
    parts = []
    for name, g in (("before", graph), ("after", changed)):
        spec, snapshot = publish(
            undirected_document(tmp_path / name, supervision_share=0.25), undirected_tables(g)
        )
        build_bundle(spec, snapshot)
        bundle = load_bundle(spec.output.bundle)
        rel = bundle.relations[KNOWS]
        role = np.full(rel.count, "", dtype=object)
        for p in ("validation", "test", "message", "supervision"):
            role[rel.parts[p].numpy()] = p
        parts.append(dict(zip(named_pairs(bundle, KNOWS), role, strict=True)))
    kept = set(parts[0]) & set(parts[1])
    assert len(kept) >= 2 * 0.85 * graph.number_of_edges()
    assert [e for e in kept if parts[0][e] != parts[1][e]] == []


@pytest.mark.parametrize(
    ("task", "key_path", "words"),
    [
        ({"relations": ["person.know.person"]}, "task.relations[0]", "did you mean"),
        (
            {"by_time": {"property": "sine", "validation_from": 0.5, "test_from": 0.7}},
            "task.by_time.property",
            "did you mean 'since'",
        ),
        (
            {"by_time": {"property": "since", "validation_from": 0.5, "test_from": "2020-01-01"}},
            "task.by_time.test_from",
            "must both be fractions or both dates",
        ),
        (
            {
                "by_time": {
                    "property": "since",
                    "validation_from": "2021-01-01",
                    "test_from": "2020-01-01",
                }
            },
            "task.by_time.validation_from",
            "after",
        ),
        (
            {"by_time": {"property": "since", "validation_from": "someday", "test_from": 0.2}},
            "task.by_time.validation_from",
            "ISO 8601",
        ),
        ({"negatives": {"sampling": "by-degre"}}, "task.negatives.sampling", "did you mean"),
    ],
)
def test_link_task_mistakes_name_the_key(
    tmp_path: Path, task: dict[str, Any], key_path: str, words: str
) -> None:
    graph = nx.karate_club_graph()
    with pytest.raises(SpecError) as caught:
        publish(undirected_document(tmp_path, timed=True, **task), undirected_tables(graph))
    assert caught.value.key_path == key_path and words in str(caught.value)


def test_a_resealed_manifest_cannot_misstate_the_negatives(tmp_path: Path) -> None:
    graph = nx.karate_club_graph()  # networkx
    spec, snapshot = publish(undirected_document(tmp_path), undirected_tables(graph))
    build_bundle(spec, snapshot)
    path = spec.output.bundle / "manifest.json"
    document = json.loads(path.read_text(encoding="utf-8"))
    document["relations"]["person.knows.person"]["link_split"]["negatives"]["counts"]["test"] += 1
    path.write_bytes(seal_manifest(document))
    with pytest.raises(BundleIntegrityError) as refused:
        load_bundle(spec.output.bundle)
    assert "relation.person.knows.person.negatives.test" in str(refused.value)


def test_vertex_timestamps_and_plain_numbers(tmp_path: Path) -> None:
    graph = nx.les_miserables_graph()  # networkx
    rnd = random.Random(5)
    joined = {n: rnd.randrange(1800, 1900) for n in graph}  # a year, as a plain integer
    tables = undirected_tables(graph)
    names = tables["person"].column("vertex_id").to_pylist()
    tables["person"] = tables["person"].append_column(
        "joined", pa.array([joined[n] for n in names])
    )
    document = spec_document(
        tmp_path,
        {"person": {"properties": {"joined": {"kind": "integer"}}}},
        [{"from": "person", "name": "knows", "to": "person", "undirected": True}],
        task={
            "kind": "links",
            "relations": ["person.knows.person"],
            "by_time": {
                "property": "joined",
                "of": "source",
                "validation_from": 0.5,
                "test_from": 0.75,
            },
        },
    )
    spec, snapshot = publish(document, tables)
    build_bundle(spec, snapshot)
    bundle = load_bundle(spec.output.bundle)
    pairs = named_pairs(bundle, KNOWS)
    # the pair's time: the earlier of its two directions' source years
    pair_time = {frozenset(p): min(joined[p[0]], joined[p[1]]) for p in pairs}
    years = pd.Series(list(pair_time.values()))
    low = years.quantile(0.5, interpolation="lower")  # pandas' own quantile
    high = years.quantile(0.75, interpolation="lower")
    for pair, part in zip(pairs, part_of_edges(bundle, KNOWS), strict=True):
        when = pair_time[frozenset(pair)]
        assert part == ("train" if when < low else "validation" if when < high else "test")
    cut = bundle.manifest["relations"]["person.knows.person"]["link_split"]["by_time"]
    assert (cut["validation_from"], cut["test_from"]) == (low, high)


@pytest.mark.parametrize(
    ("extra", "key_path", "words"),
    [
        (
            {
                "task": {
                    "kind": "edge-values",
                    "relation": "person.knows.person",
                    "property": "since",
                    "supervision_share": 0.2,
                }
            },
            "task.supervision_share",
            "is for links tasks",
        ),
        (
            {"label": {"vertex_type": "person", "property": "since"}},
            "label",
            "takes its target from edges",
        ),
        (
            {
                "task": {
                    "kind": "links",
                    "relations": ["person.knows.person"],
                    "unseen_vertices": True,
                    "by_time": {"property": "since", "validation_from": 0.5, "test_from": 0.6},
                }
            },
            "task.unseen_vertices",
            "do not combine",
        ),
        (
            {"task": {"kind": "links", "relations": ["person.knows.person"], "negative": {}}},
            "task.negative",
            "did you mean 'negatives'",
        ),
        (
            {
                "task": {
                    "kind": "links",
                    "relations": ["person.knows.person"],
                    "relation": "person.knows.person",
                }
            },
            "task.relation",
            "lists relations",
        ),
    ],
)
def test_more_link_task_mistakes(
    tmp_path: Path, extra: dict[str, Any], key_path: str, words: str
) -> None:
    document = undirected_document(tmp_path, timed=True)
    if "label" in extra:
        document["vertex_types"]["person"] = {"properties": {"since": {"kind": "string"}}}
    document.update(extra)
    with pytest.raises(SpecError) as caught:
        publish(document, undirected_tables(nx.karate_club_graph()))
    assert caught.value.key_path == key_path and words in str(caught.value)
