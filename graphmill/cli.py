"""The ``graphmill`` command.

Exit codes (also in README): 0 ok, 1 checks failed, 2 bad input or spec, 3 source unreadable,
4 authentication refused, 5 source timeout, 6 server error, 7 malformed response,
8 bundle or snapshot integrity, 9 optional dependency missing, 70 internal error.
"""

from __future__ import annotations

import argparse
import json
import logging
import sys
from collections.abc import Sequence
from typing import Any

from graphmill._version import __version__
from graphmill.errors import ExitCode, GraphmillError

COMMANDS = {
    "pull": "extract the source into the staged snapshot",
    "check": "validate the snapshot; exit 1 if a finding has severity error",
    "build": "turn the snapshot into the bundle (Parquet tables, tensors, manifest)",
    "run": "pull, check, and build if the checks pass",
    "inspect": "summarise a bundle and verify its hashes",
    "schema": "print one of the shipped JSON Schemas (spec, report, manifest, snapshot)",
}


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
        elif name == "schema":
            cmd.add_argument("name", choices=["spec", "report", "manifest", "snapshot"])
        else:
            cmd.add_argument("spec", help="pipeline spec (YAML)")
        if name in ("pull", "check", "build", "run"):
            cmd.add_argument(
                "--engine",
                metavar="KIND",
                help="engine for the set work: local (DuckDB, the default) or reference; "
                "overrides the spec's engine.kind",
            )
            cmd.add_argument(
                "--memory-limit",
                metavar="SIZE",
                help="most memory the local engine holds before spilling, e.g. 2GiB",
            )
            cmd.add_argument("--threads", type=int, metavar="N", help="engine worker threads")
        if name == "check":
            cmd.add_argument("--junit", metavar="PATH", help="also write a JUnit XML report")
        if name in ("build", "run"):
            cmd.add_argument(
                "--even-if-failing",
                action="store_true",
                help="build the bundle even when checks report errors",
            )
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    logging.basicConfig(
        level=logging.INFO if args.verbose else logging.WARNING,
        format="graphmill: %(levelname)s: %(message)s",
        stream=sys.stderr,
    )
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
        logging.getLogger("graphmill").debug("internal error", exc_info=True)
        text = f"internal error: {type(exc).__name__}: {exc}. Please report it (run with -v)"
        return _fail(args, text, ExitCode.INTERNAL, {"error": type(exc).__name__})


def _fail(args: argparse.Namespace, text: str, code: int, detail: dict[str, Any]) -> int:
    if getattr(args, "json", False):
        print(json.dumps({"ok": False, "exit_code": int(code), "message": text, **detail}))
    else:
        print(f"graphmill: {text}", file=sys.stderr)
    return int(code)


def _dispatch(args: argparse.Namespace) -> int:
    from rich.console import Console

    from graphmill._progress import progress_for_terminal

    console = Console(stderr=False, highlight=False)
    if args.command == "schema":
        from graphmill._schemas import load_schema

        print(json.dumps(load_schema(args.name), indent=2))
        return ExitCode.OK
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
            info = pipeline.pull()
            _emit(args, console, info.to_dict(), _render_pull)
            return ExitCode.OK
        if args.command == "check":
            report = pipeline.check()
            if args.junit:
                from pathlib import Path

                report.write_junit(Path(args.junit))
            if args.json:
                print(json.dumps(report.to_dict(), sort_keys=True))
            else:
                report.render(console)
            return ExitCode.OK if report.passed else ExitCode.CHECKS_FAILED
        if args.command == "build":
            built = pipeline.build(even_if_failing=args.even_if_failing)
            _emit(args, console, built.to_dict(), _render_build)
            return ExitCode.OK
        result = pipeline.run(even_if_failing=args.even_if_failing)
        if args.json:
            print(json.dumps(result.to_dict(), sort_keys=True))
        else:
            _render_pull(console, result.pull.to_dict())
            result.report.render(console)
            if result.build is not None:
                _render_build(console, result.build.to_dict())
            else:
                console.print("[red]no bundle built[/red]: the checks failed (see above)")
        return result.exit_code


def _with_engine_flags(spec: Any, args: argparse.Namespace) -> Any:
    """The spec with ``--engine``, ``--memory-limit`` and ``--threads`` applied."""
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
    from rich.table import Table

    table = Table(title=f"snapshot {info['snapshot']}", title_justify="left")
    table.add_column("table")
    table.add_column("rows", justify="right")
    for name, n in info["vertex_counts"].items():
        table.add_row(f"vertices {name}", f"{n:,}")
    for name, n in info["edge_counts"].items():
        table.add_row(f"edges {name}", f"{n:,}")
    console.print(table)
    resumed = f", {info['units_resumed']} resumed" if info.get("units_resumed") else ""
    console.print(f"pulled {info['units_total']} unit(s){resumed} in {info['seconds']:.1f} s")
    for warning in info.get("warnings", []):
        console.print(f"[yellow]note[/yellow]: {warning}")


def _render_build(console: Any, info: dict[str, Any]) -> None:
    console.print(f"[green]bundle written[/green]: {info.get('bundle')}")
    for key in ("vertex_counts", "edge_counts", "dropped_edges"):
        if info.get(key):
            console.print(f"  {key.replace('_', ' ')}: {info[key]}")


def _render_inspect(console: Any, summary: dict[str, Any]) -> None:
    console.print_json(json.dumps(summary, default=str))


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
