"""The facade: pull, check, build, run and inspect, from Python.

>>> import graphmill                                   # doctest: +SKIP
>>> pipeline = graphmill.Pipeline.from_file("spec.yaml")  # doctest: +SKIP
>>> result = pipeline.run()                             # doctest: +SKIP
>>> result.report.passed, result.build.bundle           # doctest: +SKIP
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from graphmill._progress import Progress, SilentProgress
from graphmill.connectors import open_source
from graphmill.errors import ExitCode, GraphmillError
from graphmill.snapshot import PullInfo, Snapshot
from graphmill.snapshot import pull as _pull
from graphmill.spec import PipelineSpec, load_spec

if TYPE_CHECKING:
    from graphmill.transform import BuildInfo
    from graphmill.validate import Report


class ChecksFailedError(GraphmillError):
    """Validation found error-severity findings; the bundle was not built."""

    exit_code = ExitCode.CHECKS_FAILED


@dataclass
class RunResult:
    """What :meth:`Pipeline.run` did: each stage's info; ``build`` is None if checks failed."""

    pull: PullInfo
    report: Report
    build: BuildInfo | None
    seconds: float

    @property
    def exit_code(self) -> ExitCode:
        return ExitCode.OK if self.report.passed else ExitCode.CHECKS_FAILED

    def to_dict(self) -> dict[str, Any]:
        return {
            "pull": self.pull.to_dict(),
            "check": self.report.summary(),
            "build": self.build.to_dict() if self.build else None,
            "seconds": round(self.seconds, 3),
            "exit_code": int(self.exit_code),
        }


class Pipeline:
    """The stages of one spec. Each stage reads what the previous one published on disk."""

    def __init__(self, spec: PipelineSpec, *, progress: Progress | None = None) -> None:
        self.spec = spec
        self.progress = progress or SilentProgress()

    @classmethod
    def from_file(cls, path: str | Path, *, progress: Progress | None = None) -> Pipeline:
        return cls(load_spec(path), progress=progress)

    def pull(self) -> PullInfo:
        """Extract the source into the staged snapshot (resuming an interrupted pull)."""
        source = open_source(self.spec)
        source.progress = self.progress  # for sources that report their own long work
        return _pull(self.spec, source, progress=self.progress)

    def snapshot(self) -> Snapshot:
        return Snapshot.open(self.spec.output.snapshot)

    def check(self) -> Report:
        """Validate the snapshot; write the JSON report (and JUnit XML if configured)."""
        from graphmill.validate import run_checks

        report = run_checks(self.spec, self.snapshot())
        report.write_json(self.spec.output.report)
        if self.spec.output.junit is not None:
            report.write_junit(self.spec.output.junit)
        return report

    def build(self, *, report: Report | None = None, even_if_failing: bool = False) -> BuildInfo:
        """Build the bundle from the snapshot. Refuses when the checks fail, unless asked."""
        from graphmill.transform import build_bundle
        from graphmill.validate import run_checks

        snapshot = self.snapshot()
        report = report or run_checks(self.spec, snapshot)
        if not report.passed and not even_if_failing:
            raise ChecksFailedError(
                f"checks failed with {report.counts['error']} error finding(s); no bundle built",
                hint="run 'graphmill check' to see them, fix the data or the spec's "
                "checks.severity, or build with --even-if-failing",
            )
        return build_bundle(
            self.spec, snapshot, checks_summary=report.summary(), progress=self.progress
        )

    def run(self, *, even_if_failing: bool = False) -> RunResult:
        """Pull, check and, if the checks pass (or ``even_if_failing``), build."""
        started = time.perf_counter()
        pulled = self.pull()
        report = self.check()
        built = None
        if report.passed or even_if_failing:
            built = self.build(report=report, even_if_failing=even_if_failing)
        return RunResult(pulled, report, built, time.perf_counter() - started)


def _pipeline(spec: PipelineSpec | str | Path) -> Pipeline:
    return Pipeline(spec) if isinstance(spec, PipelineSpec) else Pipeline.from_file(spec)


def pull(spec: PipelineSpec | str | Path) -> PullInfo:
    return _pipeline(spec).pull()


def check(spec: PipelineSpec | str | Path) -> Report:
    return _pipeline(spec).check()


def build(spec: PipelineSpec | str | Path, *, even_if_failing: bool = False) -> BuildInfo:
    return _pipeline(spec).build(even_if_failing=even_if_failing)


def run(spec: PipelineSpec | str | Path, *, even_if_failing: bool = False) -> RunResult:
    return _pipeline(spec).run(even_if_failing=even_if_failing)
