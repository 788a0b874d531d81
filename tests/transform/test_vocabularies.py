"""Vocabularies that do not move: byte order, and pinned from an earlier bundle.

Byte order is checked against Python's own ordering of the UTF-8 encodings (``bytes``
comparison); frequencies against ``collections.Counter``.
"""

from __future__ import annotations

from collections import Counter
from pathlib import Path

import numpy as np
import pyarrow as pa
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from graphmill.errors import SpecError
from graphmill.transform import build_bundle
from graphmill.transform._categorical import fit_vocabulary

from ._snapshots import publish, spec_document

words = st.lists(st.sampled_from(["a", "B", "é", "z", "Ω", "ab", "10", "9", "", "日"]), max_size=60)


@given(words, st.integers(1, 12))
@settings(max_examples=80, deadline=None)
def test_vocabulary_is_the_most_frequent_in_byte_order(values: list[str], k: int) -> None:
    vocabulary = fit_vocabulary(pa.array(values, pa.string()), k)["vocabulary"]
    counts = Counter(values)
    # Outside reference: Counter's counts, ties by the UTF-8 bytes, then sorted by bytes.
    ranked = sorted(counts, key=lambda v: (-counts[v], v.encode("utf-8")))[:k]
    assert vocabulary == sorted(ranked, key=lambda v: v.encode("utf-8"))


def test_a_new_category_leaves_the_other_columns_in_order() -> None:
    before = fit_vocabulary(pa.array(["teller", "loan", "loan", "card"]), 10)["vocabulary"]
    # "atm" arrives and becomes the most frequent; the others keep their relative order.
    after = fit_vocabulary(pa.array(["teller", "loan", "card", "atm", "atm", "atm"]), 10)
    assert before == ["card", "loan", "teller"]
    assert after["vocabulary"] == ["atm", "card", "loan", "teller"]


def _build(out: Path, channels: list[str], **extra: object):
    ids = [f"m{i:03d}" for i in range(len(channels))]
    document = spec_document(
        out,
        {"member": {"properties": {"channel": None}}},
        features={"member": [{"property": "channel", "encoding": "one-hot"}]},
        **extra,
    )
    spec, snapshot = publish(
        document, {"member": pa.table({"vertex_id": ids, "channel": channels})}
    )
    info = build_bundle(spec, snapshot)
    from graphmill.bundle import load_bundle

    return info, load_bundle(spec.output.bundle)


def test_a_pinned_vocabulary_keeps_every_column(tmp_path: Path) -> None:
    pytest.importorskip("torch")
    week1 = ["loan", "card", "loan", "teller", "card", "loan"]
    _, first = _build(tmp_path / "w1", week1)
    names1 = first.manifest["vertex_types"]["member"]["features"]["columns"]
    assert names1 == [
        "channel=card",
        "channel=loan",
        "channel=teller",
        "channel=<unknown>",
        "channel__missing",
    ]
    week2 = [*week1, "atm", "atm", "atm"]  # a new category, now the most frequent
    pin = {"pinned_from": str(tmp_path / "w1" / "bundle")}
    info, second = _build(tmp_path / "w2", week2, vocabularies=pin)
    entry = second.manifest["vertex_types"]["member"]["features"]
    assert entry["columns"] == names1  # same columns, same places
    stats = entry["encoders"][0]["statistics"]
    assert stats["pinned_from"] == {
        "bundle": "bundle",
        "manifest_sha256": first.manifest["manifest_sha256"],
    }
    matrix = second.vertex_types["member"].features.numpy()
    expected = np.zeros((9, 5))
    for row, value in enumerate(week2):
        expected[
            row, names1.index(f"channel={value}" if value != "atm" else "channel=<unknown>")
        ] = 1
    np.testing.assert_array_equal(matrix, expected)
    assert not info.warnings
    _, unpinned = _build(tmp_path / "w3", week2)  # without the pin, atm gets its own column
    assert unpinned.manifest["vertex_types"]["member"]["features"]["columns"][0] == "channel=atm"


def test_pinning_to_previous_needs_a_previous_bundle(tmp_path: Path) -> None:
    with pytest.raises(SpecError, match="no previous bundle") as caught:
        _build(tmp_path, ["a", "b"], vocabularies={"pinned_from": "previous"})
    assert caught.value.key_path == "vocabularies.pinned_from"


def test_pinning_to_a_folder_that_is_no_bundle_is_one_clear_error(tmp_path: Path) -> None:
    with pytest.raises(SpecError, match=r"vocabularies\.pinned_from: nowhere cannot be read"):
        _build(tmp_path, ["a"], vocabularies={"pinned_from": str(tmp_path / "nowhere")})
    assert not (tmp_path / "bundle").exists()  # nothing half-written


def test_a_misspelled_key_gets_a_did_you_mean(tmp_path: Path) -> None:
    from graphmill.spec import spec_from_dict

    document = spec_document(tmp_path, {"member": {}}, vocabularies={"pinned_form": "x"})
    with pytest.raises(SpecError, match="did you mean 'pinned_from'"):
        spec_from_dict(document)
