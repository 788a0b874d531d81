"""Sharded bundles: the streamed writer, the layout, the loader, tampering named."""

from __future__ import annotations

import itertools
import json
import shutil
from pathlib import Path

import numpy as np
import pyarrow.parquet as pq
import pytest

from graphmill._shards import TensorFileWriter, piece_ranges
from graphmill.bundle import inspect_bundle, load_bundle
from graphmill.errors import BundleIntegrityError, InputError
from tests.test_bundle import build_example

torch = pytest.importorskip("torch")
safetensors = pytest.importorskip("safetensors")

KNOWS = "member.knows.member"  # 29 one-way friendships, symmetrized: 58 edges


@pytest.fixture(scope="module")
def pair(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    """The same example built in one tensor file and sharded with 4 edges per piece."""
    out = tmp_path_factory.mktemp("shards")
    return build_example(out / "single"), build_example(out / "sharded", shard_edges=4)


def _manifest(root: Path) -> dict:
    return json.loads((root / "manifest.json").read_text(encoding="utf-8"))


def test_the_layouts_differ_only_where_the_threshold_says(pair: tuple[Path, Path]) -> None:
    single, sharded = pair
    assert (single / "tensors.safetensors").is_file() and not (single / "tensors").exists()
    assert "tensor_layout" not in _manifest(single)
    assert not (sharded / "tensors.safetensors").exists()
    manifest = _manifest(sharded)
    assert manifest["tensor_layout"] == {"kind": "sharded", "edges_per_shard": 4}
    pieces = manifest["tensors"][f"relation.{KNOWS}.endpoints"]["pieces"]
    assert [(p["start"], p["stop"]) for p in pieces] == piece_ranges(58, 4)
    listed = {f["path"] for f in manifest["files"]}
    on_disk = {p.relative_to(sharded).as_posix() for p in sharded.rglob("*") if p.is_file()}
    assert listed == on_disk - {"manifest.json"}  # every shard has its sha256
    assert all(len(f["sha256"]) == 64 for f in manifest["files"])


def test_sharded_round_trip_equals_the_single_file(pair: tuple[Path, Path]) -> None:
    single, sharded = load_bundle(pair[0]), load_bundle(pair[1])
    for name, one in single.vertex_types.items():
        other = sharded.vertex_types[name]
        assert torch.equal(one.features, other.features)
        assert one.labels is None or torch.equal(one.labels, other.labels)
        for part, flags in one.part_flags.items():
            assert torch.equal(flags, other.part_flags[part])
    assert list(single.relations) == list(sharded.relations)
    for key, rel in single.relations.items():
        assert torch.equal(rel.endpoints, sharded.relations[key].endpoints), key
        assert torch.equal(rel.multiplicity, sharded.relations[key].multiplicity), key
    for key in single.relations:  # the streamed edge table holds the same rows
        a, b = single.edge_table(key), sharded.edge_table(key)
        assert a.equals(b), key
    # and the rest of the bundle is the same bytes
    for name in ("tables/vertices/member.parquet", "tables/features/member.parquet"):
        assert (pair[0] / name).read_bytes() == (pair[1] / name).read_bytes()


def test_every_shard_opens_with_safe_open(pair: tuple[Path, Path]) -> None:
    from safetensors import safe_open
    from safetensors.numpy import load_file

    whole = load_file(pair[0] / "tensors.safetensors")
    manifest = _manifest(pair[1])
    for key, entry in manifest["tensors"].items():
        parts = []
        for piece in entry["pieces"]:
            with safe_open(str(pair[1] / piece["file"]), framework="np") as opened:
                assert opened.metadata() == {"bundle_format": "1"}
                parts.append(opened.get_tensor(key))
        joined = np.concatenate(parts, axis=entry["axis"])
        assert joined.dtype == whole[key].dtype and np.array_equal(joined, whole[key]), key


def test_one_relation_loads_alone(pair: tuple[Path, Path]) -> None:
    full = load_bundle(pair[1])
    alone = load_bundle(pair[1], vertex_types=[], relations=[KNOWS])
    assert alone.vertex_types == {}
    (key,) = alone.relations
    assert key.dotted == KNOWS
    assert torch.equal(alone.relations[key].endpoints, full.relations[key].endpoints)
    members = load_bundle(pair[0], vertex_types=["member"], relations=[])
    assert list(members.vertex_types) == ["member"] and members.relations == {}
    with pytest.raises(InputError, match=r"no relation 'member\.likes\.member'"):
        load_bundle(pair[1], relations=["member.likes.member"])


def _copy(pair: tuple[Path, Path], tmp_path: Path) -> Path:
    copy = tmp_path / "copy"
    shutil.copytree(pair[1], copy)
    return copy


def test_a_changed_byte_of_a_shard_is_named(pair: tuple[Path, Path], tmp_path: Path) -> None:
    copy = _copy(pair, tmp_path)
    shard = copy / "tensors" / f"relation.{KNOWS}.00007.safetensors"
    data = bytearray(shard.read_bytes())
    data[-3] ^= 0x01  # a target index in the data, not the header
    shard.write_bytes(bytes(data))
    with pytest.raises(BundleIntegrityError, match="sha256 differs") as info:
        load_bundle(copy)
    assert str(shard) in str(info.value)
    summary = inspect_bundle(copy)
    assert [f["path"] for f in summary["files"] if not f["verified"]] == [
        f"tensors/relation.{KNOWS}.00007.safetensors"
    ]
    data[20] = ord("!")  # and in the header, which is parsed even without the hashes
    shard.write_bytes(bytes(data))
    with pytest.raises(BundleIntegrityError) as info:
        load_bundle(copy, verify=False)
    assert str(shard) in str(info.value)


def test_a_missing_shard_is_named(pair: tuple[Path, Path], tmp_path: Path) -> None:
    copy = _copy(pair, tmp_path)
    shard = copy / "tensors" / "vertex.shop.safetensors"
    shard.unlink()
    with pytest.raises(BundleIntegrityError, match="a file the manifest lists is missing") as info:
        load_bundle(copy)
    assert str(shard) in str(info.value)
    with pytest.raises(BundleIntegrityError, match="the tensor file is missing") as info:
        load_bundle(copy, verify=False)
    assert str(shard) in str(info.value)


def test_a_shard_header_that_contradicts_the_index_is_named(
    pair: tuple[Path, Path], tmp_path: Path
) -> None:
    copy = _copy(pair, tmp_path)
    first, second = (copy / "tensors" / f"relation.{KNOWS}.{k:05d}.safetensors" for k in (0, 14))
    first.write_bytes(second.read_bytes())  # the last piece holds 2 edges, not 4
    with pytest.raises(BundleIntegrityError, match=r"\[2, 2\] here, the manifest says") as info:
        load_bundle(copy, verify=False)
    assert str(first) in str(info.value)


def test_the_streamed_writer_places_pieces_in_any_order(tmp_path: Path) -> None:
    from safetensors.numpy import load_file

    ends = np.arange(20, dtype=np.int64).reshape(2, 10)
    weights = np.linspace(0, 1, 10, dtype=np.float32)
    path = tmp_path / "t.safetensors"
    writer = TensorFileWriter(
        path, {"b.ends": ("int64", [2, 10]), "a.weights": ("float32", [10])}, {"m": "1"}
    )
    writer.write("b.ends", ends[1, 6:], 16)  # the end of row 1 first
    writer.write("a.weights", weights)
    writer.write("b.ends", ends[0], 0)
    writer.write("b.ends", ends[1, :6], 10)
    writer.close()
    loaded = load_file(path)  # the library itself reads what we wrote
    assert np.array_equal(loaded["b.ends"], ends) and np.array_equal(loaded["a.weights"], weights)
    assert (8 + int.from_bytes(path.read_bytes()[:8], "little")) % 8 == 0
    short = TensorFileWriter(tmp_path / "s.safetensors", {"x": ("int64", [3])}, {})
    short.write("x", np.array([1, 2]))
    with pytest.raises(ValueError, match="not written whole"):
        short.close()
    with pytest.raises(ValueError, match="outside the tensor"):
        TensorFileWriter(tmp_path / "o.safetensors", {"x": ("int64", [3])}, {}).write(
            "x", np.array([1, 2]), 2
        )


@pytest.mark.parametrize("batches", [[10], [1] * 10, [3, 5, 2]])
def test_streamed_edge_tables_cut_the_same_row_groups_whatever_the_batches(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, batches: list[int]
) -> None:
    import pyarrow as pa

    from graphmill.transform import _sharded
    from graphmill.transform._edges import EdgeArrays
    from graphmill.transform._relation_edges import edge_table

    monkeypatch.setattr(_sharded, "ROW_GROUP", 4)
    properties = pa.table({"w": [float(i) for i in range(10)]})
    edges = EdgeArrays(*(np.arange(10, dtype=np.int64) for _ in range(3)))
    path = tmp_path / "edges.parquet"
    rows = _sharded._RowGroups(path, properties, merged=False)
    start = 0
    for n in batches:
        rows.take(edge_table(edges.take(np.arange(start, start + n)), properties))
        start += n
    rows.close()
    written = pq.ParquetFile(path)
    sizes = [written.metadata.row_group(i).num_rows for i in range(written.num_row_groups)]
    assert sizes == [4, 4, 2]
    assert written.read().equals(edge_table(edges, properties))
    reference = tmp_path / "reference.parquet"  # one batch: the bytes every batching gives
    if not reference.exists():
        one = _sharded._RowGroups(reference, properties, merged=False)
        one.take(edge_table(edges, properties))
        one.close()
    assert path.read_bytes() == reference.read_bytes()


def test_shards_do_not_depend_on_the_engines_batches(tmp_path: Path) -> None:
    import pyarrow as pa
    from safetensors.numpy import load_file

    from graphmill.spec import RelationKey
    from graphmill.transform._edge_stream import EdgeStream
    from graphmill.transform._edges import EdgeArrays
    from graphmill.transform._relation_edges import DeferredEdges
    from graphmill.transform._sharded import write_shards

    key = RelationKey.parse("a.to.b")
    n = 23
    edges = EdgeArrays(
        np.arange(n, dtype=np.int64) // 3,
        np.arange(n, dtype=np.int64) % 5,
        np.arange(n, dtype=np.int64)[::-1].copy(),
        np.arange(n, dtype=np.int64) % 4 + 1,
    )
    properties = pa.table({"w": np.arange(n, dtype=np.float64)})
    written = []
    for i, sizes in enumerate([[23], [1] * 23, [5, 9, 9], [4, 4, 15]]):
        cuts = np.cumsum([0, *sizes])
        batches = [edges.take(np.arange(a, b)) for a, b in itertools.pairwise(cuts)]
        stream = EdgeStream(n, True, lambda reverse, b=batches: iter(b))
        root = tmp_path / f"bundle{i}"
        index = write_shards(
            root,
            {},
            {},
            {key.dotted: {"count": n, "merged": True}},
            {key.dotted: DeferredEdges(key, stream, False, properties)},
            4,
        )
        pieces = index["relation.a.to.b.endpoints"]["pieces"]
        assert [(p["start"], p["stop"]) for p in pieces] == piece_ranges(n, 4)
        ends = [load_file(root / p["file"])["relation.a.to.b.endpoints"] for p in pieces]
        assert np.array_equal(np.concatenate(ends, axis=1), np.stack([edges.source, edges.target]))
        table = pq.read_table(root / "tables/edges/a.to.b.parquet")
        assert table.column("w").to_pylist() == [float(r) for r in edges.rows]
        assert table.column("multiplicity").to_pylist() == edges.multiplicity.tolist()
        files = sorted(p for p in root.rglob("*") if p.is_file())
        written.append({p.relative_to(root).as_posix(): p.read_bytes() for p in files})
    assert all(w == written[0] for w in written[1:])  # the same bytes whatever the batches
