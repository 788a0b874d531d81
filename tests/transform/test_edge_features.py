"""Edge features: encoded like vertex features, aligned with the endpoints, checked by hand.

Every expected value is recomputed here with numpy from the rows written, matched to the
bundle's edges through the shipped IDs (``GraphBundle.decode``).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pyarrow as pa
import pytest

from graphmill.errors import SpecError
from graphmill.spec import RelationKey, spec_from_dict
from graphmill.transform import build_bundle

from ._snapshots import bundle_bytes, publish, spec_document

PAYS = RelationKey("member", "pays", "shop")


def _document(out: Path, **extra: object) -> dict:
    return spec_document(
        out,
        {"member": {}, "shop": {}},
        [
            {
                "from": "member",
                "name": "pays",
                "to": "shop",
                "properties": {"amount": {"kind": "float"}, "channel": None, "ref": None},
            }
        ],
        **extra,
    )


FEATURES = {
    "member.pays.shop": [
        {"property": "amount", "encoding": "log", "missing": "indicator"},
        {"property": "channel", "encoding": "one-hot"},
    ]
}


def test_edge_features_align_with_the_endpoints(tmp_path: Path) -> None:
    pytest.importorskip("torch")
    rng = np.random.default_rng(3)
    n = 40
    sources = [f"m{int(i)}" for i in rng.integers(0, 8, n)]
    targets = [f"s{int(i)}" for i in rng.integers(0, 5, n)]
    amounts = [None if i % 9 == 0 else float(v) for i, v in enumerate(rng.uniform(0, 500, n))]
    channels = [["card", "app", "till"][i % 3] for i in range(n)]
    tables = {
        "member": pa.table({"vertex_id": [f"m{i}" for i in range(8)]}),
        "shop": pa.table({"vertex_id": [f"s{i}" for i in range(5)]}),
        "member.pays.shop": pa.table(
            {
                "source_id": sources,
                "target_id": targets,
                "amount": amounts,
                "channel": channels,
                "ref": [f"e{i}" for i in range(n)],
            }
        ),
    }
    document = _document(tmp_path, edge_features=FEATURES, edges={"duplicates": "keep"})
    spec, snapshot = publish(document, tables)
    build_bundle(spec, snapshot)
    from graphmill.bundle import load_bundle

    bundle = load_bundle(spec.output.bundle)
    pays = bundle.relations[PAYS]
    assert pays.feature_names == (
        "amount__log__standardized",
        "amount__missing",
        "channel=app",
        "channel=card",
        "channel=till",
        "channel=<unknown>",
        "channel__missing",
    )
    matrix = pays.features.numpy()
    assert matrix.shape == (n, 7) and matrix.dtype == np.float32
    # numpy by hand, over all edges (no edge split): log1p, then z-score; missing -> 0
    logs = np.log1p(np.array([np.nan if a is None else a for a in amounts]))
    mean, std = np.nanmean(logs), np.nanstd(logs)
    table = bundle.edge_table(PAYS)
    endpoints = pays.endpoints.numpy()
    assert np.array_equal(endpoints[0], table.column("source_index").to_numpy())
    assert np.array_equal(endpoints[1], table.column("target_index").to_numpy())
    src = bundle.decode("member", endpoints[0])
    dst = bundle.decode("shop", endpoints[1])
    for row, ref in enumerate(table.column("ref").to_pylist()):
        i = int(ref[1:])  # the written edge this row holds
        assert (src[row], dst[row]) == (sources[i], targets[i])
        amount = amounts[i]
        want = 0.0 if amount is None else (np.log1p(amount) - mean) / std
        assert matrix[row, 0] == pytest.approx(want, abs=1e-5)
        assert matrix[row, 1] == (amount is None)
        hot = ["app", "card", "till"].index(channels[i])
        assert matrix[row, 2:].tolist() == [float(j == hot) for j in range(4)] + [0.0]
    entry = bundle.manifest["relations"]["member.pays.shop"]["features"]
    assert entry["fitted_on"] == "all edges"
    first = bundle_bytes(spec.output.bundle)
    build_bundle(spec, snapshot)
    assert bundle_bytes(spec.output.bundle) == first  # rebuilds stay byte-identical
    assert pays.encoders[0]["statistics"]["mean"] == pytest.approx(mean)


def test_an_undeclared_edge_property_is_refused_with_a_suggestion(tmp_path: Path) -> None:
    bad = {"member.pays.shop": [{"property": "amout", "encoding": "standardize"}]}
    message = r"relation 'member\.pays\.shop' does not declare"
    with pytest.raises(SpecError, match=message) as caught:
        spec_from_dict(_document(tmp_path, edge_features=bad))
    assert "did you mean 'amount'" in str(caught.value)
    assert caught.value.key_path == "edge_features.member.pays.shop[0].property"


def test_an_undeclared_relation_is_refused_with_a_suggestion(tmp_path: Path) -> None:
    bad = {"member.pay.shop": [{"property": "amount", "encoding": "standardize"}]}
    with pytest.raises(SpecError, match=r"did you mean 'member\.pays\.shop'"):
        spec_from_dict(_document(tmp_path, edge_features=bad))


def test_encoders_fit_on_the_training_edges_when_the_relation_has_an_edge_split(
    tmp_path: Path,
) -> None:
    from graphmill.transform._edge_features import add_edge_features
    from graphmill.transform._writer import BundleContent

    features = {"member.pays.shop": [{"property": "amount", "encoding": "standardize"}]}
    spec = spec_from_dict(_document(tmp_path, edge_features=features))
    amounts = np.array([1.0, 2.0, 3.0, 100.0, -40.0])
    content = BundleContent()
    content.manifest["relations"] = {"member.pays.shop": {"reverse_of": None}}
    content.tables["tables/edges/member.pays.shop.parquet"] = pa.table(
        {"source_index": [0, 0, 1, 1, 2], "target_index": [0, 1, 0, 1, 0], "amount": amounts}
    )
    train = np.array([0, 1, 2], dtype=np.int64)  # as the edge split writes it
    content.add_tensor("relation.member.pays.shop.part.train.positions", train, "train edges")
    add_edge_features(content, spec)
    entry = content.manifest["relations"]["member.pays.shop"]["features"]
    assert entry["fitted_on"] == "train edges"
    got = content.tensors["relation.member.pays.shop.features"][:, 0]
    mean, std = amounts[train].mean(), amounts[train].std()  # numpy, train rows only
    np.testing.assert_allclose(got, (amounts - mean) / std, rtol=1e-6)
