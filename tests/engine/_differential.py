"""Run the same spec on several engines and collect every output file's bytes.

:func:`outputs` runs pull (through the spec's source or a given one), check and build with
``engine.kind`` replaced, into a folder of its own, and returns ``{relative path: bytes}``
for the snapshot folder, the JSON report and the bundle folder (or the one-line error a
stage raised, which every engine must raise alike).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from pathlib import Path

from graphmill.connectors.base import GraphSource
from graphmill.errors import GraphmillError
from graphmill.pipeline import Pipeline
from graphmill.snapshot import pull
from graphmill.spec import EngineSpec, OutputSpec, PipelineSpec

ENGINES = ("reference", "local")
SourceFactory = Callable[[PipelineSpec], GraphSource]


def files_of(root: Path, prefix: str) -> dict[str, bytes]:
    if root.is_file():
        return {prefix: root.read_bytes()}
    return {
        f"{prefix}/{p.relative_to(root).as_posix()}": p.read_bytes()
        for p in sorted(root.rglob("*"))
        if p.is_file()
    }


def outputs(
    spec: PipelineSpec, kind: str, root: Path, source: SourceFactory | None = None
) -> dict[str, bytes]:
    """Every output file of pull + check + build on engine ``kind``, under ``root/kind``."""
    out = root / kind
    spec = dataclasses.replace(
        spec,
        engine=EngineSpec(kind=kind, threads=2),
        output=OutputSpec(
            snapshot=out / "snapshot", bundle=out / "bundle", report=out / "report.json"
        ),
    )
    pipeline = Pipeline(spec)
    found: dict[str, bytes] = {}
    try:
        if source is None:
            pipeline.pull()
        else:
            pull(spec, source(spec))
        found |= files_of(spec.output.snapshot, "snapshot")
        report = pipeline.check()
        found |= files_of(spec.output.report, "report.json")
        pipeline.build(report=report, even_if_failing=True)
        found |= files_of(spec.output.bundle, "bundle")
    except GraphmillError as exc:
        found["error"] = exc.one_line().encode()
    return found


def assert_identical(runs: dict[str, dict[str, bytes]]) -> None:
    """Every engine wrote the same files with the same bytes."""
    first, *others = ENGINES
    for kind in others:
        assert sorted(runs[kind]) == sorted(runs[first]), kind
        differing = [name for name in runs[first] if runs[kind][name] != runs[first][name]]
        assert not differing, f"{kind} differs from {first} in {differing}"


def run_everywhere(
    spec: PipelineSpec, root: Path, source: SourceFactory | None = None
) -> dict[str, dict[str, bytes]]:
    runs = {kind: outputs(spec, kind, root, source) for kind in ENGINES}
    assert_identical(runs)
    return runs
