"""The ``graphmill`` command.

Exit codes (also in README): 0 ok, 1 checks failed (also when ``--even-if-failing`` built a
bundle anyway), 2 bad input, spec or output path, 3 source unreadable, 4 authentication
refused, 5 source timeout, 6 server error, 7 malformed response, 8 bundle or snapshot missing
or damaged, 9 optional dependency missing, 70 internal error, 130 interrupted.
"""

from __future__ import annotations

import argparse
import contextlib
import json
import logging
import sys
from collections.abc import Iterator, Sequence
from typing import Any

from graphmill._version import __version__
from graphmill.errors import ExitCode, GraphmillError

COMMANDS = {
    "pull": "extract the source into the staged snapshot",
    "check": "validate the snapshot; exit 1 if a finding has severity error",
    "build": "turn the snapshot into the bundle (Parquet tables, tensors, manifest)",
    "run": "pull, check, and build if the checks pass",
    "inspect": "summarise a bundle and verify its hashes",
    "schema": "print one of the shipped JSON Schemas (spec, report, manifest, snapshot, ...)",
    "compare": "compare two versions of a bundle; exit 1 if the spec's drift gate fails",
    "lineage": "verify a chain of bundles, oldest first, each built after the one before",
    "card": "write a bundle's dataset card: one self-contained HTML page",
}
VERSION_COMMANDS = ("compare", "lineage", "card")  # arguments and dispatch: graphmill.compare


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="graphmill",
        description="Graphs from Gremlin servers, SPARQL stores and dumps into GNN-ready bundles.",
    )
    parser.add_argument("--version", action="version", version=f"graphmill {__version__}")
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument("--json", action="store_true", help="print one JSON document to stdout")
    common.add_argument("--no-progress", action="store_true", help="never show progress bars")
    common.add_argument("-v", "--verbose", action="store_true", help="log what happens to stderr")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    for name, text in COMMANDS.items():
        cmd = sub.add_parser(name, help=text, description=text, parents=[common])
        if name == "inspect":
            cmd.add_argument("bundle", help="bundle folder")
        elif name in VERSION_COMMANDS:
            from graphmill.compare._cli import add_arguments

            add_arguments(name, cmd)
        elif name == "schema":
            from graphmill._schemas import SCHEMA_NAMES

            cmd.add_argument("name", choices=list(SCHEMA_NAMES))
        else:
            cmd.add_argument("spec", help="pipeline spec (YAML)")
        if name in ("pull", "check", "build", "run"):
            cmd.add_argument(
                "--engine",
                metavar="KIND",
                help="engine for the set work: local (DuckDB, the default), spark or reference; "
                "overrides the spec's engine.kind",
            )
            cmd.add_argument(
                "--memory-limit",
                metavar="SIZE",
                help="most memory the local engine holds before spilling, e.g. 2GiB",
            )
            cmd.add_argument("--threads", type=int, metavar="N", help="engine worker threads")
            cmd.add_argument(
                "--cluster",
                metavar="URL",
                help="where the spark engine runs: local[N], a Spark master URL (spark://, "
                "yarn, k8s://) or a Spark Connect URL (sc://); overrides engine.cluster",
            )
        if name == "check":
            cmd.add_argument("--junit", metavar="PATH", help="also write a JUnit XML report")
        if name in ("pull", "run"):
            cmd.add_argument(
                "--fresh",
                action="store_true",
                help="discard what an interrupted pull staged and read every unit again",
            )
        if name == "check":
            cmd.add_argument(
                "--previous",
                metavar="BUNDLE",
                help="the earlier version for the leakage rule part-changed-since-previous "
                "(overrides drift_gate.previous; costs a trial build)",
            )
        if name in ("build", "run"):
            cmd.add_argument(
                "--even-if-failing",
                action="store_true",
                help="build the bundle even when checks (or the drift gate) report errors (the "
                "manifest says so; the command still exits 1)",
            )
            cmd.add_argument(
                "--previous",
                metavar="BUNDLE",
                help="compare with this earlier version (overrides drift_gate.previous)",
            )
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    with _logging_for(args.verbose):
        return _main(args)


def _main(args: argparse.Namespace) -> int:
    try:
        return int(_dispatch(args))
    except GraphmillError as exc:
        return _fail(args, exc.one_line(), exc.exit_code, exc.to_dict())
    except BrokenPipeError:  # e.g. `graphmill inspect B --json | head`: the reader left
        import os

        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return ExitCode.OK
    except KeyboardInterrupt:
        return _fail(args, "interrupted; run the same command again to resume", 130, {})
    except Exception as exc:  # a bug of ours: one line, and how to see more
        logging.getLogger("graphmill").info("internal error", exc_info=True)  # shown with -v
        text = f"internal error: {type(exc).__name__}: {exc}. Please report it (run with -v)"
        return _fail(args, text, ExitCode.INTERNAL, {"error": type(exc).__name__})


class _StderrHandler(logging.StreamHandler):
    """Writes to whatever ``sys.stderr`` is when a record is emitted (it may be replaced
    between calls of :func:`main` in one process)."""

    @property
    def stream(self) -> Any:
        return sys.stderr

    @stream.setter
    def stream(self, _value: Any) -> None:
        return None


@contextlib.contextmanager
def _logging_for(verbose: bool) -> Iterator[None]:
    """Log to stderr while a command runs: ``graphmill.*`` at WARNING, or INFO with ``-v``
    (what each stage does); other libraries' records (a driver's own error dumps) only with
    ``-v``, and only warnings and errors. Everything is restored afterwards."""
    logger = logging.getLogger("graphmill")
    handler = _StderrHandler()
    handler.setFormatter(logging.Formatter("graphmill: %(levelname)s: %(message)s"))

    def wanted(record: logging.LogRecord) -> bool:
        ours = record.name == "graphmill" or record.name.startswith("graphmill.")
        return ours or (verbose and record.levelno >= logging.WARNING)

    handler.addFilter(wanted)
    root = logging.getLogger()
    level = logger.level
    root.addHandler(handler)
    logger.setLevel(logging.INFO if verbose else logging.WARNING)
    try:
        yield
    finally:
        root.removeHandler(handler)
        logger.setLevel(level)


def _fail(args: argparse.Namespace, text: str, code: int, detail: dict[str, Any]) -> int:
    if getattr(args, "json", False):
        print(json.dumps({"ok": False, "exit_code": int(code), "message": text, **detail}))
    else:
        print(f"graphmill: {text}", file=sys.stderr)
    return int(code)


def _dispatch(args: argparse.Namespace) -> int:
    from rich.console import Console

    from graphmill._progress import progress_for_terminal

    console = Console(stderr=False, highlight=False, markup=False, soft_wrap=True)
    if args.command == "schema":
        from graphmill._schemas import load_schema

        print(json.dumps(load_schema(args.name), indent=2))
        return ExitCode.OK
    if args.command in VERSION_COMMANDS:
        from graphmill.compare._cli import run_command

        return run_command(args, console)
    if args.command == "inspect":
        from graphmill.bundle import inspect_bundle

        summary = inspect_bundle(args.bundle)
        _emit(args, console, summary, _render_inspect)
        return ExitCode.OK if summary.get("verified", True) else ExitCode.BUNDLE_CORRUPT

    from graphmill.pipeline import Pipeline
    from graphmill.spec import load_spec

    spec = _with_engine_flags(load_spec(args.spec), args)
    show = False if (args.json or args.no_progress) else None
    with progress_for_terminal(show) as progress:
        pipeline = Pipeline(spec, progress=progress)
        if args.command == "pull":
            info = pipeline.pull(fresh=args.fresh)
            _emit(args, console, info.to_dict(), _render_pull)
            return ExitCode.OK
        if args.command == "check":
            return _check(args, console, pipeline)
        if args.command == "build":
            built = pipeline.build(even_if_failing=args.even_if_failing, previous=args.previous)
            passed = pipeline.last_report is None or pipeline.last_report.passed
            passed = passed and built.leakage_passed
            document = {**built.to_dict(), "checks_passed": passed}
            _emit(args, console, document, _render_build)
            return ExitCode.OK if passed else ExitCode.CHECKS_FAILED
        result = pipeline.run(
            even_if_failing=args.even_if_failing, fresh=args.fresh, previous=args.previous
        )
        if args.json:
            print(json.dumps(result.to_dict(), sort_keys=True))
        else:
            _render_pull(console, result.pull.to_dict())
            result.report.render(console)
            if result.build is not None:
                build_doc = {**result.build.to_dict(), "checks_passed": result.report.passed}
                _render_build(console, build_doc)
            else:
                console.print("no bundle built: the checks failed (see above)")
            if result.retired is not None:
                console.print(f"the previous bundle was moved aside to {result.retired}")
        return result.exit_code


def _check(args: argparse.Namespace, console: Any, pipeline: Any) -> int:
    from pathlib import Path

    from graphmill._output_kinds import ensure_replaceable
    from graphmill._output_paths import check_output_paths, expand_path

    junit = None
    if args.junit:
        check_output_paths(pipeline.spec, extra={"--junit": args.junit})
        junit = expand_path(args.junit, Path.cwd())
        ensure_replaceable(junit, "junit", "--junit")
    report = pipeline.check(previous=args.previous)
    if junit is not None:
        report.write_junit(junit, key="--junit")
    if args.json:
        print(json.dumps(report.to_dict(), sort_keys=True))
    else:
        report.render(console)
    return ExitCode.OK if report.passed else ExitCode.CHECKS_FAILED


def _with_engine_flags(spec: Any, args: argparse.Namespace) -> Any:
    """The spec with ``--engine``, ``--memory-limit``, ``--threads`` and ``--cluster`` applied."""
    import dataclasses

    from graphmill.errors import SpecError

    changes: dict[str, Any] = {}
    if args.engine:
        changes["kind"] = args.engine
    if args.memory_limit:
        changes["memory_limit"] = args.memory_limit
    if args.threads is not None:
        if args.threads < 1:
            raise SpecError("--threads must be at least 1", hint="e.g. --threads 2")
        changes["threads"] = args.threads
    if args.cluster:
        changes["cluster"] = args.cluster
    from graphmill.engine import check_settings

    if changes:
        spec = dataclasses.replace(spec, engine=dataclasses.replace(spec.engine, **changes))
    check_settings(spec.engine)
    return spec


def _emit(args: argparse.Namespace, console: Any, document: dict[str, Any], render: Any) -> None:
    if args.json:
        print(json.dumps(document, sort_keys=True, default=str))
    else:
        render(console, document)


def _render_pull(console: Any, info: dict[str, Any]) -> None:
    from graphmill._text import plural

    console.print(f"snapshot {info['snapshot']}")
    _render_counts(console, info["vertex_counts"], info["edge_counts"])
    resumed = f", {info['units_resumed']} resumed" if info.get("units_resumed") else ""
    units = plural(info["units_total"], "work unit")
    console.print(f"pulled {units}{resumed} in {info['seconds']:.1f} s")
    for warning in info.get("warnings", []):
        console.print(f"note: {warning}")


def _render_counts(console: Any, vertices: dict[str, int], edges: dict[str, int]) -> None:
    """One aligned line per vertex type and per relation: ``  vertices person   1,234``."""
    rows = [(f"vertices {k}", n) for k, n in vertices.items()]
    rows += [(f"edges {k}", n) for k, n in edges.items()]
    width = max((len(name) for name, _ in rows), default=0)
    for name, n in rows:
        console.print(f"  {name:<{width}}  {n:>12,}")


def _render_build(console: Any, info: dict[str, Any]) -> None:
    from graphmill._text import plural

    if info.get("checks_passed", True):
        console.print(f"bundle written: {info.get('bundle')}")
    else:
        console.print(
            f"bundle written FROM FAILING CHECKS (--even-if-failing): {info.get('bundle')}"
        )
    _render_counts(console, info.get("vertex_counts", {}), info.get("edge_counts", {}))
    for name, n in (info.get("duplicate_vertices") or {}).items():
        if n:
            console.print(
                f"  {name}: {plural(n, 'duplicate vertex row', 'duplicate vertex rows')} dropped"
            )
    for relation, reasons in (info.get("dropped_edges") or {}).items():
        for reason, n in reasons.items():
            if n:
                console.print(
                    f"  {relation}: {plural(n, 'edge')} dropped ({reason.replace('_', ' ')})"
                )
    for what in ("merged_edges", "added_edges"):
        for relation, n in (info.get(what) or {}).items():
            if n:
                verb = what.split("_")[0]
                console.print(f"  {relation}: {plural(n, 'edge')} {verb}")
    if info.get("part_sizes"):
        parts = ", ".join(f"{k} {n:,}" for k, n in info["part_sizes"].items())
        console.print(f"  parts: {parts}")
    for warning in info.get("warnings", []):
        console.print(f"note: {warning}")


def _render_inspect(console: Any, summary: dict[str, Any]) -> None:
    from graphmill._inspect_text import summary_lines

    for line in summary_lines(summary):
        console.print(line, markup=False, highlight=False)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
