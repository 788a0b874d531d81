"""``compare`` verifies every file of both bundles by default, hashing the very bytes it
compares while it compares: a file altered on disk (read by the comparison or not, still
parseable or not) fails with exit code 8 and one line naming the file, and no result."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from graphmill import compare_bundles
from graphmill.cli import main
from graphmill.errors import BundleIntegrityError, ExitCode
from tests.compare._versions import build_version

PEOPLE = {f"p{i:02d}": (float(i % 7), ["red", "blue"][i % 2]) for i in range(30)}
LATER = {f"p{i:02d}": (float(i % 5), ["red", "blue"][i % 2]) for i in range(4, 36)}


@pytest.fixture(scope="module")
def pair(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    root = tmp_path_factory.mktemp("verify")
    knows = [(f"p{i:02d}", f"p{(i + 3) % 30:02d}") for i in range(30)]
    old = build_version(root / "old", PEOPLE, ["home"], knows, [])
    new = build_version(root / "new", LATER, ["home"], knows[4:], [])
    return old, new


def _flip(path: Path, at: int) -> None:
    """Change one byte in place: same size, other sha256."""
    data = bytearray(path.read_bytes())
    data[at % len(data)] ^= 0xFF
    path.write_bytes(bytes(data))


# (file in the bundle, where to flip a byte): read by the comparison and still parseable
# (a byte in the middle of a page), read and no longer parseable (the footer length), and
# never read by the comparison (the tensors)
ALTERED = [
    ("tables/vertices/person.parquet", 4),
    ("tables/edges/person.knows.person.parquet", -6),
    ("tensors.safetensors", -1),
]


@pytest.mark.parametrize(("name", "at"), ALTERED)
def test_an_altered_file_fails_with_its_name(pair, tmp_path: Path, capsys, name, at) -> None:
    old, new = pair
    altered = tmp_path / "new"
    shutil.copytree(new, altered)
    _flip(altered / name, at)
    with pytest.raises(BundleIntegrityError, match="sha256 differs") as caught:
        compare_bundles(old, altered)
    assert caught.value.file == str(altered / name)
    capsys.readouterr()
    assert main(["compare", str(old), str(altered)]) == ExitCode.BUNDLE_CORRUPT == 8
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and name in err[0] and "Traceback" not in err[0]
    # the same in the old bundle
    shutil.rmtree(altered)
    shutil.copytree(old, altered)
    _flip(altered / name, at)
    with pytest.raises(BundleIntegrityError, match="sha256 differs"):
        compare_bundles(altered, new)


def test_a_missing_file_fails_before_any_comparison(pair, tmp_path: Path) -> None:
    old, new = pair
    altered = tmp_path / "new"
    shutil.copytree(new, altered)
    (altered / "card.html").unlink()
    with pytest.raises(BundleIntegrityError, match="missing") as caught:
        compare_bundles(old, altered)
    assert caught.value.file == str(altered / "card.html")


def test_verify_false_reads_an_unread_altered_file_without_noticing(pair, tmp_path) -> None:
    old, new = pair
    altered = tmp_path / "new"
    shutil.copytree(new, altered)
    _flip(altered / "tensors.safetensors", -1)
    # the check above is the verification's doing: without it the same pair compares
    doc = compare_bundles(old, altered, verify=False).to_dict()
    assert doc == {**compare_bundles(old, new).to_dict(), "new": doc["new"]}
