"""The facade: pull, check, build, run and inspect, from Python.

>>> import graphmill                                   # doctest: +SKIP
>>> pipeline = graphmill.Pipeline.from_file("spec.yaml")  # doctest: +SKIP
>>> result = pipeline.run()                             # doctest: +SKIP
>>> result.report.passed, result.build.bundle           # doctest: +SKIP
"""

from __future__ import annotations

import logging
import time
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from graphmill._output_kinds import (
    OutputPathError,
    ensure_replaceable,
    output_errors,
    retire_bundle,
)
from graphmill._progress import Progress, ProgressTask, SilentProgress
from graphmill._reuse import StageMemo
from graphmill._text import plural
from graphmill.connectors import open_source
from graphmill.errors import BundleIntegrityError, ExitCode, GraphmillError
from graphmill.snapshot import SNAPSHOT_FILE, PullInfo, Snapshot
from graphmill.snapshot import pull as _pull
from graphmill.spec import PipelineSpec, load_spec

if TYPE_CHECKING:
    from graphmill.transform import BuildInfo
    from graphmill.validate import Report

log = logging.getLogger("graphmill.pipeline")


class ChecksFailedError(GraphmillError):
    """Validation found error-severity findings; the bundle was not built."""

    exit_code = ExitCode.CHECKS_FAILED


class _LoggedProgress:
    """Progress that also logs, at INFO, each task as it starts (what ``-v`` shows)."""

    def __init__(self, inner: Progress) -> None:
        self._inner = inner

    def task(self, description: str, total: int | None = None) -> ProgressTask:
        log.info("%s%s", description, f" ({total:,} to go)" if total else "")
        return self._inner.task(description, total)


@dataclass
class RunResult:
    """What :meth:`Pipeline.run` did: each stage's info; ``build`` is None if checks failed."""

    pull: PullInfo
    report: Report
    build: BuildInfo | None
    seconds: float
    retired: Path | None = None

    @property
    def exit_code(self) -> ExitCode:
        """0 when the checks passed (and the bundle was built); 1 when they failed, whether
        or not ``even_if_failing`` built a bundle anyway (a failed leakage audit counts)."""
        leak_free = self.build is None or self.build.leakage_passed
        return ExitCode.OK if self.report.passed and leak_free else ExitCode.CHECKS_FAILED

    def to_dict(self) -> dict[str, Any]:
        return {
            "pull": self.pull.to_dict(),
            "check": self.report.summary(),
            "build": self.build.to_dict() if self.build else None,
            "stale_bundle": str(self.retired) if self.retired else None,
            "seconds": round(self.seconds, 3),
            "exit_code": int(self.exit_code),
        }


class Pipeline:
    """The stages of one spec. Each stage reads what the previous one published on disk;
    the one thing carried in memory is what the check's leakage audit indexed (vertex
    indices with their keyed-hash numbers), which the next build takes when the snapshot is
    unchanged (``graphmill/_reuse.py``).

    Before a stage does any work, the outputs it will replace are checked to be earlier
    graphmill outputs of the same kind. A ``build`` or ``run`` that ends without a new bundle
    moves the previous bundle aside to ``<bundle>.stale`` (see :meth:`run`).
    """

    def __init__(self, spec: PipelineSpec, *, progress: Progress | None = None) -> None:
        from graphmill.engine import check_settings

        check_settings(spec.engine)  # an unknown engine or bad size fails before any work
        self.spec = spec
        self.progress: Progress = _LoggedProgress(progress or SilentProgress())
        self.last_report: Report | None = None
        self.retired: Path | None = None
        # What the check's leakage audit computed (vertex indices, keyed-hash numbers) for
        # the build of this pipeline to take, under a key of the snapshot's content.
        self._memo = StageMemo()

    @classmethod
    def from_file(cls, path: str | Path, *, progress: Progress | None = None) -> Pipeline:
        return cls(load_spec(path), progress=progress)

    def _ensure_outputs(self, *kinds: str) -> None:
        out = self.spec.output
        for kind in kinds:
            path = getattr(out, kind)
            if path is not None:
                ensure_replaceable(path, kind, f"output.{kind}")

    def pull(self, *, fresh: bool = False) -> PullInfo:
        """Extract the source into the staged snapshot, resuming an interrupted pull unit by
        unit where the unit's input is unchanged; ``fresh`` discards everything staged."""
        self._ensure_outputs("snapshot")
        _ensure_staging(Path(f"{self.spec.output.snapshot}.staging"))
        log.info("pull: %s source into %s", self.spec.source_kind, self.spec.output.snapshot)
        snapshot = self.spec.output.snapshot
        with output_errors("output.snapshot", snapshot, Path(f"{snapshot}.staging")):
            source = open_source(self.spec)
            source.progress = self.progress  # for sources that report their own long work
            info = _pull(self.spec, source, progress=self.progress, fresh=fresh)
        log.info(
            "pull: %s (%d resumed), %s",
            plural(info.units_total, "work unit"),
            info.units_resumed,
            plural(info.pages_read, "page"),
        )
        for name, n in {**info.vertex_counts, **info.edge_counts}.items():
            log.info("pull: %s: %s", name, plural(n, "row"))
        return info

    def snapshot(self) -> Snapshot:
        """The published snapshot; :class:`BundleIntegrityError` (exit 8) when there is none."""
        root = self.spec.output.snapshot
        if not (root / SNAPSHOT_FILE).is_file():
            raise BundleIntegrityError(
                "no snapshot here", file=str(root), hint="run 'graphmill pull' first"
            )
        return Snapshot.open(root)

    def check(self, *, previous: str | Path | None = None, part_moves: bool = True) -> Report:
        """Validate the snapshot; write the JSON report (and JUnit XML if configured).
        ``previous`` (or ``drift_gate.previous``): the earlier bundle that the leakage rule
        ``part-changed-since-previous`` compares with, through a trial build; ``part_moves``
        false leaves that rule to a build that follows (what :meth:`run` does)."""
        self._ensure_outputs("report", "junit")
        report = self._checked(self.snapshot(), previous, part_moves)
        report.write_json(self.spec.output.report)
        log.info("check: wrote %s", self.spec.output.report)
        if self.spec.output.junit is not None:
            report.write_junit(self.spec.output.junit)
            log.info("check: wrote %s", self.spec.output.junit)
        return report

    def _checked(
        self, snapshot: Snapshot, previous: str | Path | None = None, part_moves: bool = True
    ) -> Report:
        from graphmill.validate import run_checks

        log.info("check: %s", snapshot.root)
        if not part_moves and (previous or self.spec.drift_gate.previous):
            log.info(
                "check: part-changed-since-previous is left to the build, which compares "
                "the bundle it writes with the previous one"
            )
        self._memo.clear()
        report = run_checks(
            self.spec,
            snapshot,
            previous=Path(previous) if previous is not None else None,
            part_moves=part_moves,
            progress=self.progress,
            memo=self._memo,
        )
        rules = sorted({e.rule for e in report.evaluated})
        log.info(
            "check: %s on %s: %s",
            plural(len(rules), "rule"),
            plural(len(report.evaluated), "subject"),
            report.verdict(),
        )
        self.last_report = report
        return report

    def build(
        self,
        *,
        report: Report | None = None,
        even_if_failing: bool = False,
        previous: str | Path | None = None,
    ) -> BuildInfo:
        """Build the bundle from the snapshot. Refuses when the checks fail, unless asked.

        With ``even_if_failing`` a bundle is built from failing checks (or a failing drift
        gate); its manifest's ``validation.passed`` is false (``inspect`` says so), and the CLI
        still exits 1. When no bundle is built, an earlier one is moved aside to
        ``<bundle>.stale``. ``previous`` (or the spec's ``drift_gate.previous``): the version
        to compare with; a failing drift gate publishes nothing, unless ``even_if_failing``.
        """
        self._ensure_outputs("bundle")
        try:
            return self._build(report, even_if_failing, previous)
        except BaseException as exc:
            self._retire(exc)
            raise

    def _build(
        self, report: Report | None, even_if_failing: bool, previous: str | Path | None
    ) -> BuildInfo:
        from graphmill.transform import build_bundle

        snapshot = self.snapshot()
        if report is None:
            report = self._checked(snapshot, previous, part_moves=False)
        self.last_report = report
        if not report.passed and not even_if_failing:
            raise ChecksFailedError(
                f"checks failed with {plural(report.counts['error'], 'error finding')}, "
                f"the first {_first_error(report)}; no bundle built",
                hint="run 'graphmill check' to see them, fix the data or the spec's "
                "checks.severity, or build with --even-if-failing",
            )
        if not report.passed:
            log.info("build: the checks failed; building anyway (--even-if-failing)")
        try:
            info = build_bundle(
                self.spec,
                snapshot,
                checks_summary=report.summary(),
                progress=self.progress,
                previous=Path(previous) if previous is not None else None,
                even_if_drifting=even_if_failing,
                even_if_leaking=even_if_failing,
                memo=self._memo,
            )
        finally:
            self._memo.clear()  # nothing is held past the build
        log.info("build: wrote %s", info.bundle)
        for path in sorted(Path(info.bundle).rglob("*")):
            if path.is_file():
                size = plural(path.stat().st_size, "byte")
                log.info("build: file %s (%s)", path.relative_to(info.bundle), size)
        return info

    def _retire(self, cause: BaseException | str) -> None:
        reason = cause if isinstance(cause, str) else _reason(cause)
        try:
            self.retired = retire_bundle(self.spec.output.bundle, reason)
        except OSError as exc:  # never hide the error that brought us here
            log.warning("could not move the previous bundle aside: %s", exc)
            return
        if self.retired is None:
            return
        log.info("the previous bundle was moved aside to %s: %s", self.retired, reason)
        if isinstance(cause, GraphmillError):  # said in the error's one line
            moved = f"The previous bundle was moved aside to {self.retired}"
            cause.hint = f"{cause.hint.rstrip('. ')}. {moved}" if cause.hint else moved

    def run(
        self,
        *,
        even_if_failing: bool = False,
        fresh: bool = False,
        previous: str | Path | None = None,
    ) -> RunResult:
        """Pull (from scratch with ``fresh``), check and, if the checks pass (or
        ``even_if_failing``), build.

        Every output is checked before the pull starts. A run that ends without a new bundle
        (checks failed, or any error or interruption) moves the previous bundle aside to
        ``<bundle>.stale``, so that nothing picks it up as current.
        """
        started = time.perf_counter()
        self._ensure_outputs("snapshot", "report", "junit", "bundle")
        try:
            pulled = self.pull(fresh=fresh)
            report = self.check(previous=previous, part_moves=False)
        except BaseException as exc:
            self._retire(exc)
            raise
        built = None
        if report.passed or even_if_failing:
            built = self.build(report=report, even_if_failing=even_if_failing, previous=previous)
        else:
            self._retire(f"checks failed with {plural(report.counts['error'], 'error')}")
        result = RunResult(pulled, report, built, time.perf_counter() - started)
        result.retired = self.retired
        return result


def _ensure_staging(staging: Path) -> None:
    """Refuse a ``<snapshot>.staging`` that graphmill did not make: a pull would delete it."""
    if not staging.exists() and not staging.is_symlink():
        return
    ours = staging.is_dir() and not staging.is_symlink()
    if ours and any(staging.iterdir()):
        ours = (staging / "fingerprint").is_file() or (staging / "units").is_dir()
    if not ours:
        raise OutputPathError(
            f"{str(staging)!r} holds something graphmill did not write; a pull stages its "
            "pages there",
            key_path="output.snapshot",
            hint="move it away or choose another path for output.snapshot",
        )


def _reason(exc: BaseException) -> str:
    if isinstance(exc, GraphmillError):
        return exc.one_line()
    if isinstance(exc, KeyboardInterrupt):
        return "interrupted"
    return f"{type(exc).__name__}: {exc}"


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


def check(spec: PipelineSpec | str | Path, *, previous: str | Path | None = None) -> Report:
    return _pipeline(spec).check(previous=previous)


def build(spec: PipelineSpec | str | Path, *, even_if_failing: bool = False) -> BuildInfo:
    return _pipeline(spec).build(even_if_failing=even_if_failing)


def run(
    spec: PipelineSpec | str | Path, *, even_if_failing: bool = False, fresh: bool = False
) -> RunResult:
    return _pipeline(spec).run(even_if_failing=even_if_failing, fresh=fresh)
