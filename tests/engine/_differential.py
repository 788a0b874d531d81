"""Run the same spec on several engines and collect every output file's bytes.

:func:`outputs` runs pull (through the spec's source or a given one), check and build with
the spec's engine replaced (a kind, or whole engine settings), into a folder of its own,
and returns ``{relative path: bytes}`` for the snapshot folder, the JSON report and the
bundle folder (or the one-line error a stage raised, which every engine must raise alike).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Sequence
from pathlib import Path

from graphmill.connectors.base import GraphSource
from graphmill.errors import GraphmillError
from graphmill.pipeline import Pipeline
from graphmill.snapshot import pull
from graphmill.spec import EngineSpec, OutputSpec, PipelineSpec

ENGINES: tuple[str | EngineSpec, ...] = ("reference", "local")
SourceFactory = Callable[[PipelineSpec], GraphSource]


def files_of(root: Path, prefix: str) -> dict[str, bytes]:
    if root.is_file():
        return {prefix: root.read_bytes()}
    return {
        f"{prefix}/{p.relative_to(root).as_posix()}": p.read_bytes()
        for p in sorted(root.rglob("*"))
        if p.is_file()
    }


def settings_of(engine: str | EngineSpec) -> EngineSpec:
    return EngineSpec(kind=engine, threads=2) if isinstance(engine, str) else engine


def outputs(
    spec: PipelineSpec, engine: str | EngineSpec, root: Path, source: SourceFactory | None = None
) -> dict[str, bytes]:
    """Every output file of pull + check + build on ``engine``, under ``root/<kind>``."""
    settings = settings_of(engine)
    out = root / settings.kind
    spec = dataclasses.replace(
        spec,
        engine=settings,
        output=OutputSpec(
            snapshot=out / "snapshot",
            bundle=out / "bundle",
            report=out / "report.json",
            shard_edges=spec.output.shard_edges,
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
    first, *others = runs
    for kind in others:
        assert sorted(runs[kind]) == sorted(runs[first]), kind
        differing = [name for name in runs[first] if runs[kind][name] != runs[first][name]]
        assert not differing, f"{kind} differs from {first} in {differing}"


def run_everywhere(
    spec: PipelineSpec,
    root: Path,
    source: SourceFactory | None = None,
    engines: Sequence[str | EngineSpec] = ENGINES,
) -> dict[str, dict[str, bytes]]:
    """Outputs by engine kind, checked byte-identical to the first engine's."""
    runs = {settings_of(e).kind: outputs(spec, e, root, source) for e in engines}
    assert_identical(runs)
    return runs
