"""Bad inputs to compare, lineage, card and builds after a previous version."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from graphmill.cli import main
from tests.bad_inputs._corpus import Case, table_project, table_spec

MORE_PEOPLE = "ref,age,team\np1,30,red\np2,41,blue\np3,25,red\np4,38,blue\np5,50,red\n"
GATE = "drift_gate: {rules: {vertices-added: {limit: 0.1}}}\n"


def _build(root: Path, spec: str = "spec.yaml", *more: str) -> None:
    assert main(["run", str(root / spec), "--no-progress", *more]) == 0


def _two_versions(root: Path) -> None:
    """out/bundle from the good project, then out2/bundle (one more person) after it."""
    _build(root)
    _build(root, "spec2.yaml", "--previous", str(root / "out" / "bundle"))


def _tamper(root: Path) -> None:
    _build(root)
    table = root / "out" / "bundle" / "tables" / "vertices" / "person.parquet"
    data = bytearray(table.read_bytes())
    data[len(data) // 2] ^= 1
    table.write_bytes(bytes(data))


def _tamper_snapshot(root: Path) -> None:
    """Build both versions, then flip a byte of the second snapshot's person table."""
    _two_versions(root)
    folder = root / "out2" / "bundle.snapshot"
    table = next(p for p in folder.rglob("*.parquet") if "person" in p.name)
    data = bytearray(table.read_bytes())
    data[len(data) // 2] ^= 1
    table.write_bytes(bytes(data))


def _with_spec(name: str, text: str) -> Callable[[Path], None]:
    def setup(root: Path) -> None:
        _two_versions(root)
        (root / name).write_text(text, encoding="utf-8")

    return setup


def _first_then_pull(root: Path) -> None:
    _build(root)
    assert_pulled(root, "spec2.yaml")


def _version_files(spec2_extra: str = "") -> dict[str, str | bytes]:
    spec2 = table_spec(
        vertex_file="{path: people2.csv, id_column: ref, type: person}",
        output="{bundle: out2/bundle}",
        extra=spec2_extra,
    )
    return table_project(files={"spec2.yaml": spec2, "people2.csv": MORE_PEOPLE})


CASES = [
    Case(
        name="versions-compare-not-a-bundle",
        category="versions",
        files=_version_files(),
        argv=("compare", "{dir}/people.csv", "{dir}/out/bundle"),
        setup=lambda root: _build(root),
        exit_code=8,
        where="{dir}/people.csv",
        says="not a graphmill bundle",
    ),
    Case(
        name="versions-compare-altered-table",
        category="versions",
        files=_version_files(),
        argv=("compare", "{dir}/out/bundle", "{dir}/out/bundle"),
        setup=_tamper,
        exit_code=8,
        where="person.parquet",
        says="sha256 differs",
    ),
    Case(
        name="versions-compare-bundle-with-snapshot",
        category="versions",
        files=_version_files(),
        argv=("compare", "{dir}/out/bundle", "{dir}/out2/bundle.snapshot"),
        setup=_two_versions,
        exit_code=2,
        where="{dir}/out2/bundle.snapshot",
        says="is a snapshot, but",
    ),
    Case(
        name="versions-compare-altered-snapshot",
        category="versions",
        files=_version_files(),
        argv=("compare", "{dir}/out/bundle.snapshot", "{dir}/out2/bundle.snapshot"),
        setup=_tamper_snapshot,
        exit_code=8,
        where="person",
        says="sha256 differs from snapshot.json",
    ),
    Case(
        name="versions-compare-drift-rule-typo",
        category="versions",
        files=_version_files(),
        argv=("compare", "{dir}/out/bundle", "{dir}/out2/bundle", "--spec", "{dir}/bad.yaml"),
        setup=_with_spec(
            "bad.yaml", table_spec(extra="drift_gate: {rules: {feature-pis: {limit: 1}}}\n")
        ),
        exit_code=2,
        where="drift_gate.rules.feature-pis",
        says="did you mean 'feature-psi'",
    ),
    Case(
        name="versions-compare-gate-fails",
        category="versions",
        files=_version_files(),
        argv=("compare", "{dir}/out/bundle", "{dir}/out2/bundle", "--spec", "{dir}/gate.yaml"),
        setup=_with_spec("gate.yaml", table_spec(extra=GATE)),
        says="drift gate failed",
        exit_code=1,
    ),
    Case(
        name="versions-build-previous-missing",
        category="versions",
        files=_version_files(),
        argv=("build", "{dir}/spec2.yaml", "--no-progress", "--previous", "{dir}/nope"),
        setup=lambda root: assert_pulled(root, "spec2.yaml"),
        exit_code=8,
        where="{dir}/nope",
        says="not a graphmill bundle",
    ),
    Case(
        name="versions-build-gate-publishes-nothing",
        category="versions",
        files=_version_files(GATE),
        argv=("build", "{dir}/spec2.yaml", "--no-progress", "--previous", "{dir}/out/bundle"),
        setup=_first_then_pull,
        exit_code=1,
        says="drift gate failed",
    ),
    Case(
        name="versions-lineage-out-of-order",
        category="versions",
        files=_version_files(),
        argv=("lineage", "{dir}/out2/bundle", "{dir}/out/bundle"),
        setup=_two_versions,
        exit_code=8,
        where="{dir}/out/bundle",
        says="not built after",
    ),
    Case(
        name="versions-card-not-a-bundle",
        category="versions",
        files=_version_files(),
        argv=("card", "{dir}"),
        exit_code=8,
        says="not a graphmill bundle",
    ),
]


def assert_pulled(root: Path, spec: str) -> None:
    assert main(["pull", str(root / spec), "--no-progress"]) == 0
