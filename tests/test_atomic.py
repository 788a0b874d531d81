"""The publisher: replaces only earlier graphmill outputs of the same kind, leaves no scratch,
keeps the old output when the new one fails; output paths checked at spec load."""

from __future__ import annotations

from pathlib import Path

import pytest

from graphmill._atomic import atomic_directory, publish_file
from graphmill._output_kinds import (
    OutputPathError,
    ensure_replaceable,
    existing_kind,
    read_stale_note,
    retire_bundle,
)
from graphmill.errors import SpecError
from graphmill.spec import spec_from_dict


def _scratch(folder: Path) -> list[str]:
    return sorted(
        p.name for p in folder.rglob("*") if ".writing-" in p.name or ".retired-" in p.name
    )


def _snapshot_like(folder: Path, text: str = "1") -> None:
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "snapshot.json").write_text(f'{{"snapshot_format": 1, "n": {text}}}')


def test_an_earlier_output_of_the_same_kind_is_replaced(tmp_path):
    target = tmp_path / "snap"
    _snapshot_like(target, "1")
    (target / "old.parquet").write_text("old")
    with atomic_directory(target, kind="snapshot", key="output.snapshot") as scratch:
        _snapshot_like(scratch, "2")
    assert (target / "snapshot.json").read_text().endswith('"n": 2}')
    assert not (target / "old.parquet").exists()
    assert _scratch(tmp_path) == []


def test_an_output_of_another_kind_is_refused(tmp_path):
    target = tmp_path / "b"
    _snapshot_like(target)
    with pytest.raises(OutputPathError) as caught, atomic_directory(target, kind="bundle"):
        raise AssertionError("the body must not run")
    assert "output.bundle" in str(caught.value) and "graphmill's snapshot" in str(caught.value)
    assert (target / "snapshot.json").is_file() and _scratch(tmp_path) == []


def test_a_failed_write_keeps_the_old_output_and_leaves_nothing(tmp_path):
    target = tmp_path / "snap"
    _snapshot_like(target, "1")
    with pytest.raises(RuntimeError), atomic_directory(target, kind="snapshot") as scratch:
        _snapshot_like(scratch, "2")
        raise RuntimeError("the build broke")
    assert (target / "snapshot.json").read_text().endswith('"n": 1}')
    assert _scratch(tmp_path) == []


def test_a_failed_first_write_removes_the_folders_it_made(tmp_path):
    target = tmp_path / "a" / "b" / "snap"
    with pytest.raises(RuntimeError), atomic_directory(target, kind="snapshot"):
        raise RuntimeError("broke")
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize(
    ("content", "kind", "ok"),
    [
        (b"", "report", True),
        (b'{"report_format": 1, "findings": []}', "report", True),
        (b'{"mine": 1}', "report", False),
        (b"\xff\xfe not text", "report", False),
        (b'<testsuites name="graphmill checks"/>', "junit", True),
        (b'<testsuites name="pytest"/>', "junit", False),
        (b'{"report_format": 1}', "junit", False),
        (b'<testsuites name="graphmill checks"/>', "report", False),
    ],
)
def test_single_files_are_replaced_only_when_ours(tmp_path, content, kind, ok):
    path = tmp_path / "out.file"
    path.write_bytes(content)
    if ok:
        publish_file(path, b"new", kind=kind, key=f"output.{kind}")
        assert path.read_bytes() == b"new"
    else:
        with pytest.raises(OutputPathError, match=f"output.{kind}"):
            publish_file(path, b"new", kind=kind, key=f"output.{kind}")
        assert path.read_bytes() == content
    assert _scratch(tmp_path) == []


def test_empty_folders_are_replaced_but_not_where_a_file_goes(tmp_path):
    (tmp_path / "empty").mkdir()
    ensure_replaceable(tmp_path / "empty", "bundle", "output.bundle")
    with pytest.raises(OutputPathError, match="a folder"):
        ensure_replaceable(tmp_path / "empty", "report", "output.report")
    (tmp_path / "empty-file").write_text("")
    with pytest.raises(OutputPathError, match="a file"):
        ensure_replaceable(tmp_path / "empty-file", "bundle", "output.bundle")


def test_a_symlink_is_never_followed_into(tmp_path):
    _snapshot_like(tmp_path / "real")
    (tmp_path / "link").symlink_to(tmp_path / "real")
    assert existing_kind(tmp_path / "link") is None
    with pytest.raises(OutputPathError):
        ensure_replaceable(tmp_path / "link", "snapshot", "output.snapshot")


def test_retiring_a_bundle_moves_it_aside_with_a_note(tmp_path):
    bundle = tmp_path / "bundle"
    bundle.mkdir()
    (bundle / "manifest.json").write_text('{"bundle_format": 1}')
    stale = retire_bundle(bundle, "checks failed with 2 errors")
    assert stale == tmp_path / "bundle.stale" and not bundle.exists()
    assert read_stale_note(stale)["reason"] == "checks failed with 2 errors"
    # a second retirement replaces the first stale copy
    bundle.mkdir()
    (bundle / "manifest.json").write_text('{"bundle_format": 1, "week": 2}')
    assert retire_bundle(bundle, "again") == stale
    assert "week" in (stale / "manifest.json").read_text()


def test_retiring_touches_nothing_that_is_not_ours(tmp_path):
    (tmp_path / "bundle").mkdir()
    (tmp_path / "bundle" / "photo.jpg").write_text("x")
    assert retire_bundle(tmp_path / "bundle", "why") is None
    assert (tmp_path / "bundle" / "photo.jpg").exists()
    ours = tmp_path / "b2"
    ours.mkdir()
    (ours / "manifest.json").write_text('{"bundle_format": 1}')
    (tmp_path / "b2.stale").write_text("someone's file")
    assert retire_bundle(ours, "why") is None
    assert (ours / "manifest.json").exists()
    assert (tmp_path / "b2.stale").read_text() == "someone's file"


def _doc(tmp_path: Path, **output: str) -> dict:
    (tmp_path / "v.csv").write_text("id\na\n")
    return {
        "spec_version": 1,
        "source": {
            "kind": "table-files",
            "vertex_files": [{"path": "v.csv", "id_column": "id", "type": "t"}],
        },
        "vertex_types": {"t": {}},
        "output": {"bundle": "out/b", **output},
    }


def test_spec_load_accepts_ordinary_outputs(tmp_path):
    spec = spec_from_dict(
        _doc(tmp_path, report="out/report.json", junit="out/j.xml"), base_dir=tmp_path
    )
    assert spec.output.snapshot == tmp_path / "out/b.snapshot"


@pytest.mark.parametrize(
    ("output", "key", "words"),
    [
        ({"bundle": "v.csv"}, "output.bundle", "is the input source.vertex_files[0].path"),
        ({"bundle": "."}, "output.bundle", "is the spec's folder"),
        ({"snapshot": "out/b"}, "output.snapshot", "is output.bundle's path"),
        ({"report": "out/b/r.json"}, "output.report", "lies inside output.bundle's path"),
        ({"report": "out/b.stale"}, "output.report", "writes beside output.bundle"),
    ],
)
def test_spec_load_refuses_overlaps_naming_the_key(tmp_path, output, key, words):
    with pytest.raises(SpecError) as caught:
        spec_from_dict(_doc(tmp_path, **output), base_dir=tmp_path)
    assert caught.value.key_path == key
    assert words in caught.value.message


def test_a_symlinked_spelling_of_an_input_is_the_same_input(tmp_path):
    (tmp_path / "alias").symlink_to(tmp_path, target_is_directory=True)
    with pytest.raises(SpecError, match="is the input"):
        spec_from_dict(_doc(tmp_path, bundle="alias/v.csv"), base_dir=tmp_path)


# --- output-side OS errors: a folder the command may not write into -----------------------------

REPO = Path(__file__).resolve().parents[1]
PERMISSION_CASES = [  # (output key, command, spec output, commands run first with full rights)
    ("output.snapshot", "pull", {"snapshot": "ro/snap"}, ()),
    ("output.report", "check", {"report": "ro/report.json"}, ("pull",)),
    ("output.junit", "check", {"junit": "ro/junit.xml"}, ("pull",)),
    ("output.bundle", "build", {"bundle": "ro/bundle"}, ("pull",)),
]


@pytest.fixture
def shared_folder():
    """A folder under /tmp that an unprivileged user can enter (pytest's tmp_path is 0700)."""
    import shutil
    import tempfile

    folder = Path(tempfile.mkdtemp(prefix="graphmill-perm-"))
    folder.chmod(0o755)
    yield folder
    for path in [folder, *folder.rglob("*")]:
        if path.is_dir():
            path.chmod(0o755)
    shutil.rmtree(folder)


def _as_unprivileged(argv: list[str]) -> list[str]:
    """Root ignores file modes: run the command as ``nobody`` then (util-linux setpriv)."""
    import os
    import shutil

    if os.geteuid() != 0:
        return argv
    setpriv = shutil.which("setpriv")
    if setpriv is None:
        pytest.skip("running as root without setpriv: cannot drop privileges")
    return [setpriv, "--reuid=65534", "--regid=65534", "--clear-groups", *argv]


@pytest.mark.parametrize(
    ("key", "command", "output", "first"), PERMISSION_CASES, ids=[c[0] for c in PERMISSION_CASES]
)
def test_permission_denied_is_one_line_exit_2_naming_the_key(
    shared_folder, key, command, output, first
):
    import json
    import os
    import subprocess
    import sys

    root = shared_folder
    (root / "v.csv").write_text("id\na\nb\n")
    # the report goes to a folder anyone may write, unless it is the output under test
    document = _doc(root, **{"snapshot": "snap", "report": "rw/report.json", **output})
    if "bundle" not in output:
        document["output"]["bundle"] = "out/b"
    (root / "spec.yaml").write_text(json.dumps(document))
    (root / "ro").mkdir(mode=0o755)
    (root / "rw").mkdir()
    (root / "rw").chmod(0o777)
    python = [sys.executable, "-m", "graphmill.cli"]
    env = {**os.environ, "PYTHONPATH": str(REPO)}
    for step in first:
        done = subprocess.run([*python, step, str(root / "spec.yaml"), "--no-progress"], env=env)
        assert done.returncode == 0
    (root / "ro").chmod(0o555)

    def listing() -> list[str]:
        return sorted(str(p) for p in root.rglob("*") if "rw" not in p.relative_to(root).parts)

    before = listing()
    done = subprocess.run(
        _as_unprivileged([*python, command, str(root / "spec.yaml"), "--no-progress"]),
        env=env,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert done.returncode == 2, done.stderr
    lines = [line for line in done.stderr.splitlines() if line.strip()]
    assert len(lines) == 1 and "Traceback" not in done.stderr, done.stderr
    assert key in lines[0] and "Permission denied" in lines[0]
    assert listing() == before  # nothing left, nothing removed


def test_scratch_left_by_a_killed_process_is_swept_when_old(tmp_path):
    import os

    from graphmill._atomic import sweep_scratch

    target = tmp_path / "snap"
    old_writing = tmp_path / ".snap.writing-0123abcd"
    old_retired = tmp_path / ".snap.retired-89abcdef"
    fresh = tmp_path / ".snap.writing-fedcba98"  # another publish may still be writing it
    unrelated = tmp_path / ".snap.notes-0123abcd"
    for path in (old_writing, old_retired, fresh):
        path.mkdir()
        (path / "part.parquet").write_text("x")
    unrelated.write_text("mine")
    for path in (old_writing, old_retired):
        os.utime(path, (0, 0))
    with atomic_directory(target, kind="snapshot") as scratch:
        _snapshot_like(scratch)
    assert not old_writing.exists() and not old_retired.exists()
    assert fresh.exists() and unrelated.exists()
    assert sweep_scratch(target, older_than_s=0) == [fresh]
