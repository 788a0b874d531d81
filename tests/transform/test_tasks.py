"""Tasks end to end: numeric vertex targets, edge classes and values, float labels refused,
edge parts stable across versions. Outside references: networkx's karate club and
Les Misérables graphs, a networkx bipartite generator, pandas' mean and std."""

from __future__ import annotations

import random
from pathlib import Path

import networkx as nx
import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from graphmill.bundle import load_bundle
from graphmill.errors import InputError, SpecError
from graphmill.spec import RelationKey
from graphmill.transform import build_bundle
from graphmill.transform._edge_splits import edge_parts

from ._snapshots import bundle_bytes, publish, spec_document

PARTS = ("train", "validation", "test")


def karate_tables(missing: int = 3) -> tuple[nx.Graph, dict[str, pa.Table]]:
    """Karate club with each member's weighted degree as a number; ``missing`` members
    (every 11th) have none."""
    graph = nx.karate_club_graph()  # networkx.karate_club_graph (Zachary 1977)
    strength = dict(graph.degree(weight="weight"))
    values = [None if n % 11 == 5 and n // 11 < missing else float(strength[n]) for n in graph]
    people = pa.table({"vertex_id": [f"k{n:02d}" for n in graph], "strength": values})
    knows = pa.table(
        {
            "source_id": [f"k{u:02d}" for u, _ in graph.edges],
            "target_id": [f"k{v:02d}" for _, v in graph.edges],
        }
    )
    return graph, {"person": people, "person.knows.person": knows}


def test_vertex_values_standardized_on_train(tmp_path: Path) -> None:
    _, tables = karate_tables()
    document = spec_document(
        tmp_path,
        {"person": {"properties": {"strength": {"kind": "float"}}}},
        [{"from": "person", "name": "knows", "to": "person", "undirected": True}],
        label={"vertex_type": "person", "property": "strength"},
        task={"kind": "vertex-values"},
        split={"seed": 3},
    )
    spec, snapshot = publish(document, tables)
    assert spec.split.method == "random"  # numbers have no classes to stratify by
    build_bundle(spec, snapshot)
    bundle = load_bundle(spec.output.bundle)
    person = bundle.vertex_types["person"]
    assert person.labels is None and bundle.manifest["label"] is None
    raw = pd.Series(tables["person"].column("strength").to_pylist(), dtype="float64")
    train = person.parts["train"].numpy()
    every_part = np.concatenate([person.parts[p].numpy() for p in PARTS])
    assert sorted(every_part.tolist()) == raw.dropna().index.tolist()  # exactly the numbered
    mean, std = raw.iloc[train].mean(), raw.iloc[train].std(ddof=0)  # pandas' own statistics
    targets = person.targets.numpy()
    assert targets.dtype == np.float32
    np.testing.assert_array_equal(np.isnan(targets), raw.isna().to_numpy())
    np.testing.assert_allclose(targets[~raw.isna()], ((raw - mean) / std).dropna(), rtol=1e-5)
    stats = bundle.manifest["task"]["standardized"]
    assert stats["mean"] == pytest.approx(mean) and stats["std"] == pytest.approx(std)
    assert stats["fitted_count"] == len(train) and stats["with_target"] == raw.notna().sum()
    assert abs(float(np.nanmean(targets[train]))) < 1e-5


def test_float_label_is_never_classes(tmp_path: Path) -> None:
    _, tables = karate_tables()
    declared = spec_document(
        tmp_path,
        {"person": {"properties": {"strength": {"kind": "float"}}}},
        label={"vertex_type": "person", "property": "strength"},
    )
    with pytest.raises(SpecError) as caught:
        publish(declared, tables)
    assert caught.value.key_path == "label.property" and "vertex-values" in str(caught.value)
    undeclared = spec_document(
        tmp_path,
        {"person": {"properties": {"strength": None}}},
        label={"vertex_type": "person", "property": "strength"},
    )
    spec, snapshot = publish(undeclared, tables)
    with pytest.raises(InputError) as found:
        build_bundle(spec, snapshot)
    assert found.value.key_path == "label.property" and "vertex-values" in str(found.value)
    assert not spec.output.bundle.exists()


def les_miserables_tables() -> tuple[nx.Graph, dict[str, pa.Table]]:
    graph = nx.les_miserables_graph()  # networkx: Knuth's co-appearance graph, 77 x 254
    assert (graph.number_of_nodes(), graph.number_of_edges()) == (77, 254)
    edges = list(graph.edges(data="weight"))
    return graph, {
        "character": pa.table({"vertex_id": sorted(graph.nodes)}),
        "character.meets.character": pa.table(
            {
                "source_id": [u for u, _, _ in edges],
                "target_id": [v for _, v, _ in edges],
                "scenes": [int(w) for _, _, w in edges],
            }
        ),
    }


def les_miserables_document(out: Path, **task: object) -> dict[str, object]:
    return spec_document(
        out,
        {"character": {}},
        [
            {
                "from": "character",
                "name": "meets",
                "to": "character",
                "undirected": True,
                "properties": {"scenes": {"kind": "integer"}},
            }
        ],
        task={"relation": "character.meets.character", "property": "scenes", **task},
        split={"seed": 1862, "fractions": {"train": 0.8, "validation": 0.1, "test": 0.1}},
    )


def test_edge_values_on_les_miserables(tmp_path: Path) -> None:
    graph, tables = les_miserables_tables()
    spec, snapshot = publish(les_miserables_document(tmp_path, kind="edge-values"), tables)
    build_bundle(spec, snapshot)
    bundle = load_bundle(spec.output.bundle)
    rel = bundle.relations[RelationKey("character", "meets", "character")]
    ends = rel.endpoints.numpy()
    assert ends.shape == (2, 2 * 254)  # symmetrized: both directions of each pair
    ids = bundle.vertex_table("character").column("vertex_id").to_pylist()
    pairs = [(ids[s], ids[t]) for s, t in ends.T]
    part_of = np.empty(ends.shape[1], dtype=object)
    for p in PARTS:
        positions = rel.parts[p].numpy()
        assert (np.diff(positions) > 0).all()
        part_of[positions] = p
    assert all(part_of != None)  # noqa: E711 - every edge in exactly one part
    by_pair = {}
    for (s, t), p in zip(pairs, part_of, strict=True):
        assert by_pair.setdefault(frozenset((s, t)), p) == p  # both directions share a part
    weights = pd.Series([graph.edges[s, t]["weight"] for s, t in pairs], dtype="float64")
    train = rel.parts["train"].numpy()
    mean, std = weights.iloc[train].mean(), weights.iloc[train].std(ddof=0)
    np.testing.assert_allclose(rel.targets.numpy(), (weights - mean) / std, rtol=1e-5)
    table = pq.read_table(
        spec.output.bundle / "tables/edge_parts/character.meets.character.parquet"
    )
    assert table.column("part").to_pylist() == part_of.tolist()
    sizes = bundle.manifest["relations"]["character.meets.character"]["parts"]["sizes"]
    for p, f in zip(PARTS, (0.8, 0.1, 0.1), strict=True):
        n = 254  # pairs, each placed once; a hash is a fair coin per pair
        assert abs(sizes[p] / 2 - n * f) <= 4 * np.sqrt(n * f * (1 - f))


def test_edge_classes_on_a_bipartite_graph(tmp_path: Path) -> None:
    graph = nx.bipartite.random_graph(20, 30, 0.2, seed=11)  # networkx.bipartite generator
    left = {n for n, side in graph.nodes(data="bipartite") if side == 0}
    rnd = random.Random(5)
    kinds = {e: rnd.choice(["bulk", "express", "standard", None]) for e in graph.edges}
    rows = [(u, v) if u in left else (v, u) for u, v in graph.edges]
    tables = {
        "shop": pa.table({"vertex_id": [f"s{n}" for n in sorted(left)]}),
        "item": pa.table({"vertex_id": [f"i{n}" for n in sorted(set(graph) - left)]}),
        "shop.ships.item": pa.table(
            {
                "source_id": [f"s{u}" for u, _ in rows],
                "target_id": [f"i{v}" for _, v in rows],
                "way": [kinds.get((u, v), kinds.get((v, u))) for u, v in rows],
            }
        ),
    }
    document = spec_document(
        tmp_path,
        {"shop": {}, "item": {}},
        [{"from": "shop", "name": "ships", "to": "item", "properties": {"way": None}}],
        task={"kind": "edge-classes", "relation": "shop.ships.item", "property": "way"},
    )
    spec, snapshot = publish(document, tables)
    build_bundle(spec, snapshot)
    first = bundle_bytes(spec.output.bundle)
    build_bundle(spec, snapshot)
    assert bundle_bytes(spec.output.bundle) == first  # byte-identical rebuild
    bundle = load_bundle(spec.output.bundle)
    rel = bundle.relations[RelationKey("shop", "ships", "item")]
    classes = bundle.manifest["task"]["classes"]
    assert classes == ["bulk", "express", "standard"]
    edge_table = bundle.edge_table(rel.key)
    expected = [classes.index(w) if w else -1 for w in edge_table.column("way").to_pylist()]
    assert rel.targets.numpy().tolist() == expected
    assert len(expected) == graph.number_of_edges()


def test_edge_parts_stay_put_when_5_percent_changes() -> None:
    graph = nx.les_miserables_graph()  # networkx
    edges = sorted(graph.edges)
    rnd = random.Random(8)
    removed = set(rnd.sample(edges, len(edges) // 20))
    names = sorted(graph.nodes)
    added = {(f"new{i}", rnd.choice(names)) for i in range(len(edges) // 20)}
    before_edges = edges
    after_edges = sorted((set(edges) - removed) | added)

    def parts(chosen: list[tuple[str, str]]) -> dict[tuple[str, str], int]:
        codes = edge_parts(
            [s for s, _ in chosen],
            "meets",
            [t for _, t in chosen],
            undirected=True,
            fractions=(0.7, 0.15, 0.15),
            seed=4,
        )
        return dict(zip(chosen, codes.tolist(), strict=True))

    before, after = parts(before_edges), parts(after_edges)
    kept = set(before) & set(after)
    assert len(kept) == len(edges) - len(removed)
    assert [e for e in kept if before[e] != after[e]] == []  # no unchanged edge moved
    flipped = parts([(t, s) for s, t in before_edges])
    assert all(flipped[(t, s)] == before[(s, t)] for s, t in before_edges)
    other_seed = edge_parts(
        [s for s, _ in edges],
        "meets",
        [t for _, t in edges],
        undirected=True,
        fractions=(0.7, 0.15, 0.15),
        seed=5,
    )
    assert other_seed.tolist() != list(before.values())


@pytest.mark.parametrize(
    ("task", "key_path", "words"),
    [
        ({"kind": "edge-classses"}, "task.kind", "did you mean 'edge-classes'"),
        (
            {"kind": "edge-values", "relation": "character.meet.character"},
            "task.relation",
            "did you mean 'character.meets.character'",
        ),
        ({"kind": "edge-values", "property": "scene"}, "task.property", "did you mean 'scenes'"),
        ({"kind": "vertex-values"}, "task.relation", "is for edge tasks"),
    ],
)
def test_task_mistakes_name_the_key(
    tmp_path: Path, task: dict[str, str], key_path: str, words: str
) -> None:
    _, tables = les_miserables_tables()
    with pytest.raises(SpecError) as caught:
        publish(les_miserables_document(tmp_path, **task), tables)
    assert caught.value.key_path == key_path and words in str(caught.value)


def test_check_sees_a_number_not_classes(tmp_path: Path) -> None:
    from graphmill.validate import run_checks

    _, tables = karate_tables()
    rules = {}
    for kind in ("vertex-classes", "vertex-values"):
        document = spec_document(
            tmp_path / kind,
            {"person": {"properties": {"strength": None}}},
            [{"from": "person", "name": "knows", "to": "person", "undirected": True}],
            label={"vertex_type": "person", "property": "strength"},
            task={"kind": kind},
        )
        spec, snapshot = publish(document, tables)
        report = run_checks(spec, snapshot)
        rules[kind] = {e.rule for e in report.evaluated}
    assert "thin-class" in rules["vertex-classes"]  # each distinct number a class
    assert "thin-class" not in rules["vertex-values"]
    assert "unlabeled-vertices" in rules["vertex-values"]  # a missing number is still counted


def test_values_task_refuses_text_found_at_build(tmp_path: Path) -> None:
    graph, tables = karate_tables()
    tables["person"] = tables["person"].append_column(
        "club", pa.array([graph.nodes[n]["club"] for n in graph])
    )
    document = spec_document(
        tmp_path,
        {"person": {"properties": {"club": None}}},
        label={"vertex_type": "person", "property": "club"},
        task={"kind": "vertex-values"},
    )
    spec, snapshot = publish(document, tables)
    with pytest.raises(InputError) as refused:
        build_bundle(spec, snapshot)
    assert refused.value.key_path == "label.property" and "vertex-classes" in str(refused.value)
    assert not spec.output.bundle.exists()


def test_an_edge_tasks_reverse_relation_follows_its_forward_edges(tmp_path: Path) -> None:
    graph = nx.bipartite.random_graph(20, 30, 0.25, seed=12)  # networkx.bipartite generator
    left = {n for n, side in graph.nodes(data="bipartite") if side == 0}
    rows = sorted((u, v) if u in left else (v, u) for u, v in graph.edges)
    tables = {
        "shop": pa.table({"vertex_id": [f"s{n}" for n in sorted(left)]}),
        "item": pa.table({"vertex_id": [f"i{n}" for n in sorted(set(graph) - left)]}),
        "shop.ships.item": pa.table(
            {
                "source_id": [f"s{u}" for u, _ in rows],
                "target_id": [f"i{v}" for _, v in rows],
                "days": [float(u + v) for u, v in rows],
            }
        ),
    }
    document = spec_document(
        tmp_path,
        {"shop": {}, "item": {}},
        [{"from": "shop", "name": "ships", "to": "item", "properties": {"days": None}}],
        task={"kind": "edge-values", "relation": "shop.ships.item", "property": "days"},
        edges={"add_reverse": True},
    )
    spec, snapshot = publish(document, tables)
    build_bundle(spec, snapshot)
    bundle = load_bundle(spec.output.bundle)

    def frame(dotted: str, flip: bool) -> pd.DataFrame:
        """(shop ID, item ID, part) of each edge of ``dotted``, read with pandas."""
        entry = bundle.manifest["relations"][dotted]
        edges = pd.read_parquet(spec.output.bundle / entry["table"])
        parts = pd.read_parquet(spec.output.bundle / entry["parts"]["table"])
        ids = {
            t: bundle.vertex_table(t).column("vertex_id").to_pylist()
            for t in tables
            if "." not in t
        }
        a = [ids[entry["source_type"]][i] for i in edges["source_index"]]
        b = [ids[entry["target_type"]][i] for i in edges["target_index"]]
        shop, item = (b, a) if flip else (a, b)
        return pd.DataFrame({"shop": shop, "item": item, "part": parts["part"]})

    forward = frame("shop.ships.item", flip=False)
    reverse = frame("item.rev_ships.shop", flip=True)
    joined = forward.merge(reverse, on=["shop", "item"], suffixes=("_f", "_r"))
    assert len(joined) == len(forward) == len(reverse) == graph.number_of_edges()
    assert (joined["part_f"] == joined["part_r"]).all()  # the reverse follows its forward edge
    rev = bundle.relations[RelationKey("item", "rev_ships", "shop")]
    assert sorted(np.concatenate([rev.parts[p].numpy() for p in PARTS]).tolist()) == list(
        range(graph.number_of_edges())
    )
    assert rev.targets is None and set(joined["part_f"]) == set(PARTS)


def test_an_undeclared_float_label_is_one_clear_line_from_the_cli(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """The spec cannot know the values' kind before the pull (no kind declared): the build
    refuses with exit code 2, one line naming label.property and the task to declare."""
    import yaml

    from graphmill.cli import main
    from graphmill.errors import ExitCode

    graph = nx.karate_club_graph()  # networkx: weighted degrees are floats
    strength = dict(graph.degree(weight="weight"))
    (tmp_path / "people.csv").write_text(
        "ref,strength\n" + "".join(f"k{n:02d},{strength[n] + 0.5}\n" for n in graph)
    )
    document = {
        "spec_version": 1,
        "source": {
            "kind": "table-files",
            "vertex_files": [{"path": "people.csv", "id_column": "ref", "type": "person"}],
        },
        "vertex_types": {"person": {"properties": {"strength": None}}},
        "label": {"vertex_type": "person", "property": "strength"},
        "output": {"bundle": "out/bundle"},
    }
    (tmp_path / "spec.yaml").write_text(yaml.safe_dump(document, sort_keys=False))
    code = main(["run", str(tmp_path / "spec.yaml"), "--no-progress"])
    err = capsys.readouterr().err.strip()
    assert code == ExitCode.BAD_INPUT == 2, err
    line = next(e for e in err.splitlines() if "label.property" in e)
    assert "floating-point" in line and "vertex-values" in err and "Traceback" not in err
    assert not (tmp_path / "out" / "bundle").exists()
