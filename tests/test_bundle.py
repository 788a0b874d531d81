"""The bundle loader: hashes checked, tensors as the manifest says, tampering named."""

from __future__ import annotations

import datetime as dt
import json
from collections import Counter
from pathlib import Path
from typing import Any

import jsonschema
import numpy as np
import pyarrow as pa
import pytest

from graphmill._schemas import load_schema, validate_document
from graphmill.bundle import inspect_bundle, load_bundle
from graphmill.errors import BundleIntegrityError, InputError
from graphmill.transform import build_bundle
from tests.bad_inputs import cases_bundles
from tests.transform._snapshots import publish, spec_document

torch = pytest.importorskip("torch")


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A bundle using every tensor kind: features, labels, codes, parts, multiplicity."""
    return build_example(tmp_path_factory.mktemp("bundle"))


def build_example(out: Path, **output: Any) -> Path:
    """Build the example bundle of :func:`built` into ``out``; ``output`` adds to the spec's
    ``output`` section (``shard_edges``)."""
    document = spec_document(
        out,
        {
            "member": {
                "properties": {
                    "age": {"kind": "integer"},
                    "segment": None,
                    "joined": {"kind": "datetime"},
                    "risk": None,
                }
            },
            "shop": {"properties": {"tags": {"multi": True}}},
        },
        [
            {"from": "member", "name": "knows", "to": "member", "undirected": True},
            {
                "from": "member",
                "name": "buys",
                "to": "shop",
                "properties": {"amount": {"kind": "float"}},
            },
        ],
        features={
            "member": [
                {"property": "age", "encoding": "standardize"},
                {"property": "segment", "encoding": "categories"},
                {"property": "segment", "encoding": "one-hot", "missing": "fill"},
                {"property": "joined", "encoding": "datetime"},
            ],
            "shop": [{"property": "tags", "encoding": "multi-hot"}],
        },
        label={"vertex_type": "member", "property": "risk"},
        split={"method": "stratified", "seed": 3},
        edges={"duplicates": "merge", "add_reverse": True},
    )
    n = 30
    members = pa.table(
        {
            "vertex_id": [f"m{i:02d}" for i in range(n)],
            "age": [20 + i if i % 7 else None for i in range(n)],
            "segment": [("retail", "corp", "gov")[i % 3] for i in range(n)],
            "joined": pa.array(
                [
                    dt.datetime(2020, 1, 1, tzinfo=dt.UTC) + dt.timedelta(days=11 * i)
                    for i in range(n)
                ],
                pa.timestamp("us", tz="UTC"),
            ),
            "risk": [("low", "high")[i % 2] if i < 26 else None for i in range(n)],
        }
    )
    shops = pa.table({"vertex_id": ["s0", "s1"], "tags": [["food"], ["food", "toys"]]})
    knows = pa.table(
        {
            "source_id": [f"m{i:02d}" for i in range(n - 1)],
            "target_id": [f"m{i + 1:02d}" for i in range(n - 1)],
        }
    )
    buys = pa.table(
        {
            "source_id": ["m00", "m00", "m05"],
            "target_id": ["s0", "s0", "s1"],
            "amount": [1.0, 2.0, 3.0],
        }
    )
    document["output"].update(output)
    spec, snapshot = publish(
        document,
        {"member": members, "shop": shops, "member.knows.member": knows, "member.buys.shop": buys},
    )
    build_bundle(spec, snapshot, checks_summary={"passed": True, "counts": {"error": 0}})
    return spec.output.bundle


def test_the_manifest_schema_is_valid_draft_2020_12_and_the_manifest_matches(built: Path) -> None:
    schema = load_schema("manifest")
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    jsonschema.Draft202012Validator.check_schema(schema)
    manifest = json.loads((built / "manifest.json").read_text(encoding="utf-8"))
    validate_document("manifest", manifest)
    assert manifest["validation"] == {"passed": True, "counts": {"error": 0}}
    listed = sorted(f["path"] for f in manifest["files"])
    on_disk = sorted(p.relative_to(built).as_posix() for p in built.rglob("*") if p.is_file())
    assert listed == [p for p in on_disk if p != "manifest.json"]


def test_tensors_load_as_torch_with_the_manifest_shapes(built: Path) -> None:
    bundle = load_bundle(built)
    from safetensors.torch import load_file

    raw = load_file(built / "tensors.safetensors")
    assert set(raw) == set(bundle.manifest["tensors"])
    for key, entry in bundle.manifest["tensors"].items():
        assert isinstance(raw[key], torch.Tensor)
        assert list(raw[key].shape) == entry["shape"], key
        assert str(raw[key].dtype) == f"torch.{entry['dtype']}", key
    members = bundle.vertex_types["member"]
    assert members.features.dtype == torch.float32
    assert members.features.shape == (30, len(members.feature_names))
    assert members.labels.dtype == torch.int64 and int((members.labels == -1).sum()) == 4
    assert members.codes["segment"].dtype == torch.int64
    # The vocabulary is fitted on the train part: most frequent first, ties by value.
    segments = bundle.vertex_table("member").column("segment").to_pylist()
    train_counts = Counter(segments[i] for i in members.parts["train"].tolist())
    expected = sorted(train_counts, key=lambda v: (-train_counts[v], v))
    assert members.vocabularies["segment"] == tuple(expected)
    flags = torch.stack([members.part_flags[p] for p in ("train", "validation", "test")])
    assert flags.dtype == torch.bool and int(flags.sum(0).max()) == 1  # disjoint
    for part, positions in members.parts.items():
        assert torch.equal(torch.nonzero(members.part_flags[part]).flatten(), positions)
    buys = next(r for k, r in bundle.relations.items() if k.dotted == "member.buys.shop")
    assert buys.endpoints.dtype == torch.int64 and buys.endpoints.shape == (2, 2)
    assert buys.multiplicity.tolist() == [2.0, 1.0]


def test_feature_table_holds_the_same_values_as_the_tensor(built: Path) -> None:
    bundle = load_bundle(built)
    table = pa.parquet.read_table(built / "tables/features/member.parquet")
    members = bundle.vertex_types["member"]
    matrix = np.column_stack([table.column(n).to_numpy() for n in members.feature_names])
    assert np.array_equal(matrix, members.features.numpy())
    assert table.column("segment__code").to_pylist() == members.codes["segment"].tolist()


def _files(built: Path) -> list[str]:
    return sorted(p.relative_to(built).as_posix() for p in built.rglob("*") if p.is_file())


@pytest.mark.parametrize("where", ["first", "middle", "last"])
def test_changing_one_byte_of_any_file_is_named(built: Path, tmp_path: Path, where: str) -> None:
    import shutil

    for rel in _files(built):
        copy = tmp_path / f"{where}-{rel.replace('/', '_')}"
        shutil.copytree(built, copy)
        path = copy / rel
        data = bytearray(path.read_bytes())
        at = {"first": 0, "middle": len(data) // 2, "last": len(data) - 1}[where]
        data[at] ^= 0x01
        path.write_bytes(bytes(data))
        with pytest.raises(BundleIntegrityError) as info:
            load_bundle(copy)
        assert str(path) in str(info.value), rel
        assert "\n" not in str(info.value)
        if rel == "manifest.json":
            continue
        try:
            summary = inspect_bundle(copy)
        except BundleIntegrityError as error:  # a damaged tensor header: no summary at all
            assert rel == "tensors.safetensors" and str(path) in str(error)
        else:
            assert summary["verified"] is False
            assert [f["path"] for f in summary["files"] if not f["verified"]] == [rel]


def test_a_missing_file_is_named(built: Path, tmp_path: Path) -> None:
    import shutil

    copy = tmp_path / "copy"
    shutil.copytree(built, copy)
    (copy / "tables/parts/member.parquet").unlink()
    with pytest.raises(BundleIntegrityError, match=r"tables/parts/member\.parquet"):
        load_bundle(copy)
    with pytest.raises(BundleIntegrityError, match=r"no manifest.json"):
        load_bundle(tmp_path)


def test_inspect_summarises_without_loading_tensors(built: Path) -> None:
    summary = inspect_bundle(built)
    assert summary["verified"] is True and summary["manifest_verified"] is True
    assert summary["vertices"] == {"member": 30, "shop": 2}
    assert summary["relations"]["member.knows.member"] == 58  # 29 one-way, symmetrized
    assert summary["relations"]["shop.rev_buys.member"] == 2
    assert summary["classes"] == ["high", "low"]
    assert sum(summary["parts"].values()) == 26
    assert summary["features"]["shop"]["columns"] == [
        "tags=food",
        "tags=toys",
        "tags=<unknown>",
        "tags__missing",
    ]
    assert summary["codes"]["member"] == {"segment": 4}
    assert summary["validation"] == {"passed": True, "counts": {"error": 0}}
    assert all(f["verified"] and f["bytes"] > 0 for f in summary["files"])


def test_decode_checks_its_indices(built: Path) -> None:
    bundle = load_bundle(built)
    assert bundle.decode("member", torch.tensor([0, 29])) == ["m00", "m29"]
    with pytest.raises(InputError, match=r"index 30 is outside 0..29"):
        bundle.decode("member", [30])
    with pytest.raises(InputError, match="no vertex type 'nobody'"):
        bundle.decode("nobody", [0])


def test_verify_false_skips_the_hashes(built: Path, tmp_path: Path) -> None:
    import shutil

    copy = tmp_path / "copy"
    shutil.copytree(built, copy)
    path = copy / "tables/vertices/shop.parquet"
    data: Any = bytearray(path.read_bytes())
    data[len(data) // 2] ^= 0x01
    path.write_bytes(bytes(data))
    assert load_bundle(copy, verify=False).vertex_types["shop"].count == 2


# --- every damage of the bad-input corpus, through the Python loader ------------------------


@pytest.mark.parametrize("name", sorted(cases_bundles.DAMAGE))
@pytest.mark.parametrize("verify", [True, False])
def test_damaged_bundles_raise_integrity_errors(name: str, verify: bool, tmp_path: Path) -> None:
    where, damage = cases_bundles.DAMAGE[name]
    cases_bundles._setup(damage)(tmp_path)
    with pytest.raises(BundleIntegrityError) as info:
        load_bundle(tmp_path / "bundle", verify=verify)
    text = str(info.value)
    assert info.value.file is not None and "\n" not in text and len(text) < 600
    if verify and where == cases_bundles.TENSORS:
        # the hashes were recorded again: the structural checks, not the hashes, caught it
        assert str(tmp_path / where) in text


def test_indices_outside_their_type_are_refused(tmp_path: Path) -> None:
    """A resealed bundle whose endpoints point past the vertex count (hashes all right)."""
    import shutil

    from safetensors.numpy import load, save

    shutil.copytree(cases_bundles.good_bundle(), tmp_path / "bundle")
    path = tmp_path / cases_bundles.TENSORS
    arrays = load(path.read_bytes())
    key = "relation.person.knows.person.endpoints"
    arrays[key] = arrays[key].copy()
    arrays[key][1, 0] = 12  # the type has 12 vertices: indices 0..11
    path.write_bytes(save(arrays, metadata={"bundle_format": "1"}))
    cases_bundles._record_tensor_file(tmp_path)
    with pytest.raises(
        BundleIntegrityError,
        match=r"'relation\.person\.knows\.person\.endpoints' row 1 holds values outside 0\.\.11",
    ):
        load_bundle(tmp_path / "bundle")


def test_the_good_bundle_loads(tmp_path: Path) -> None:
    bundle = load_bundle(cases_bundles.good_bundle())
    person = bundle.vertex_types["person"]
    assert person.count == 12 and tuple(person.features.shape) == (
        12,
        3,
    )  # age, its flag, city's flag
    assert int(person.labels.min()) >= 0 and sorted(person.codes) == ["city"]
