"""Runs every case of the bad-input corpus (see ``_corpus.py``)."""

from __future__ import annotations

import hashlib
import importlib
import pkgutil
from pathlib import Path

import pytest

from graphmill.cli import main
from tests.bad_inputs import _corpus
from tests.bad_inputs._corpus import MAX_MESSAGE, Case


def _all_cases() -> list[Case]:
    cases: list[Case] = []
    package = Path(__file__).parent
    for info in pkgutil.iter_modules([str(package)]):
        if info.name.startswith("cases_"):
            module = importlib.import_module(f"tests.bad_inputs.{info.name}")
            cases.extend(module.CASES)
    return cases


CASES = _all_cases()


def test_corpus_is_large_and_names_are_unique():
    names = [case.name for case in CASES]
    assert len(names) == len(set(names)), "two cases share a name"
    assert len(CASES) >= 300, f"the corpus has only {len(CASES)} cases"
    assert _corpus.MAX_MESSAGE > 0


def _fingerprints(root: Path) -> dict[str, str]:
    return {
        str(p.relative_to(root)): hashlib.sha256(p.read_bytes()).hexdigest()
        for p in sorted(root.rglob("*"))
        if p.is_file() and not p.is_symlink()
    }


def _everything(root: Path) -> set[str]:
    return {str(p.relative_to(root)) for p in root.rglob("*")}


def _materialize(case: Case, root: Path) -> None:
    for rel, content in case.files.items():
        path = root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(content, bytes):
            path.write_bytes(content)
        else:
            path.write_text(content, encoding="utf-8")
    if case.setup is not None:
        case.setup(root)


def _allowed(rel: str, patterns: tuple[str, ...]) -> bool:
    return any(Path(rel).match(p) or rel.startswith(p.rstrip("*")) for p in patterns)


@pytest.mark.parametrize("case", CASES, ids=[c.name for c in CASES])
def test_bad_input(case: Case, tmp_path: Path, capsys, monkeypatch):
    root = tmp_path / "project"
    root.mkdir()
    _materialize(case, root)
    for key, value in case.env.items():
        monkeypatch.setenv(key, value)
    before_hashes = _fingerprints(root)
    before_paths = _everything(root)
    argv = [a.replace("{dir}", str(root)) for a in case.argv]

    code = main(argv)
    captured = capsys.readouterr()

    assert code == case.exit_code, f"exit {code}: {captured.err or captured.out}"
    assert "Traceback" not in captured.err + captured.out
    lines = [line for line in captured.err.splitlines() if line.strip()]
    assert len(lines) == 1, f"expected one message line, got: {captured.err!r}"
    message = lines[0]
    assert len(message) <= MAX_MESSAGE, f"message of {len(message)} characters"
    if case.where is not None:
        assert case.where.replace("{dir}", str(root)) in message
    if case.says is not None:
        assert case.says.replace("{dir}", str(root)) in message

    after_hashes = _fingerprints(root)
    for rel, digest in before_hashes.items():
        if _allowed(rel, case.may_change):
            continue
        assert after_hashes.get(rel) == digest, f"input {rel} was changed or removed"
    left = sorted(
        rel
        for rel in _everything(root) - before_paths
        if not _allowed(rel, case.may_leave + case.may_change)
    )
    assert left == [], f"left behind: {left}"
