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

    def pull(self, *, fresh: bool = False) -> PullInfo:
        """Extract the source into the staged snapshot, resuming an interrupted pull unit by
        unit where the unit's input is unchanged; ``fresh`` discards everything staged."""
        return _pull(self.spec, open_source(self.spec), progress=self.progress, fresh=fresh)

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
                f"checks failed with {report.counts['error']} error finding(s), the first "
                f"{_first_error(report)}; no bundle built",
                hint="run 'graphmill check' to see them, fix the data or the spec's "
                "checks.severity, or build with --even-if-failing",
            )
        return build_bundle(
            self.spec, snapshot, checks_summary=report.summary(), progress=self.progress
        )

    def run(self, *, even_if_failing: bool = False, fresh: bool = False) -> RunResult:
        """Pull (from scratch with ``fresh``), check and, if the checks pass (or
        ``even_if_failing``), build."""
        started = time.perf_counter()
        pulled = self.pull(fresh=fresh)
        report = self.check()
        built = None
        if report.passed or even_if_failing:
            built = self.build(report=report, even_if_failing=even_if_failing)
        return RunResult(pulled, report, built, time.perf_counter() - started)


def _first_error(report: Report) -> str:
    """The first error finding in a few words: rule, subject and one offender, so that the
    one-line refusal leads to the row (values capped at 60 characters)."""
    from graphmill.validate._findings import subject_label

    first = next(f for f in report.findings if f.severity == "error")
    text = f"{first.rule} on {subject_label(first.subject)}"
    if first.sample:
        shown = ", ".join(f"{k} {_capped(v)}" for k, v in first.sample[0].items())
        text += f" (e.g. {shown})"
    guesses = first.details.get("did_you_mean")
    if guesses:
        text += f" (did you mean {' or '.join(_capped(g) for g in guesses)}?)"
    return text


def _capped(value: Any, limit: int = 60) -> str:
    text = repr(
        value if isinstance(value, str | int | float | bool) or value is None else str(value)
    )
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _pipeline(spec: PipelineSpec | str | Path) -> Pipeline:
    return Pipeline(spec) if isinstance(spec, PipelineSpec) else Pipeline.from_file(spec)


def pull(spec: PipelineSpec | str | Path, *, fresh: bool = False) -> PullInfo:
    return _pipeline(spec).pull(fresh=fresh)


def check(spec: PipelineSpec | str | Path) -> Report:
    return _pipeline(spec).check()


def build(spec: PipelineSpec | str | Path, *, even_if_failing: bool = False) -> BuildInfo:
    return _pipeline(spec).build(even_if_failing=even_if_failing)


def run(
    spec: PipelineSpec | str | Path, *, even_if_failing: bool = False, fresh: bool = False
) -> RunResult:
    return _pipeline(spec).run(even_if_failing=even_if_failing, fresh=fresh)
