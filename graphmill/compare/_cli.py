"""Arguments and dispatch of the ``compare``, ``lineage`` and ``card`` commands (kept here so
that ``cli.py`` holds only one entry and one branch for them)."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any

from graphmill._text import plural
from graphmill.errors import ExitCode


def add_arguments(name: str, cmd: argparse.ArgumentParser) -> None:
    if name == "compare":
        cmd.add_argument("old", help="the earlier bundle (or snapshot) folder")
        cmd.add_argument("new", help="the later bundle (or snapshot) folder")
        cmd.add_argument("--spec", help="take the drift limits from this spec's drift_gate")
        cmd.add_argument("--junit", metavar="PATH", help="also write a JUnit XML report")
        cmd.add_argument("--report", metavar="PATH", help="also write the JSON document here")
        cmd.add_argument(
            "--index-maps",
            metavar="DIR",
            help="write old_index -> new_index of the kept vertices, one Parquet file per type",
        )
    elif name == "lineage":
        cmd.add_argument("bundles", nargs="+", help="bundle folders, oldest first")
    else:
        cmd.add_argument("bundle", help="bundle folder")
        cmd.add_argument(
            "--out",
            metavar="PATH",
            help="where to write (default: BUNDLE.card.html beside the folder)",
        )


def run_command(args: argparse.Namespace, console: Any) -> int:
    if args.command == "compare":
        return _compare(args, console)
    if args.command == "lineage":
        from graphmill.compare._lineage import verify_lineage

        links = verify_lineage(args.bundles)
        if args.json:
            print(json.dumps({"ok": True, "links": links}, sort_keys=True))
        else:
            for link in links:
                before = (link["previous_manifest_sha256"] or "(start)")[:12]
                console.print(
                    f"[green]ok[/green] {link['bundle']} {link['manifest_sha256'][:12]} ← {before}"
                )
            console.print(f"chain of {plural(len(links), 'bundle')} verified")
        return ExitCode.OK
    from graphmill.card import write_card

    path = write_card(args.bundle, Path(args.out) if args.out else None)
    if args.json:
        print(json.dumps({"ok": True, "card": str(path)}))
    else:
        console.print(f"[green]card written[/green]: {path}")
    return ExitCode.OK


def _compare(args: argparse.Namespace, console: Any) -> int:
    from graphmill.compare import compare_bundles
    from graphmill.compare._compare import side_kind

    if args.index_maps and side_kind(Path(args.old)) == "snapshot":
        from graphmill.errors import InputError

        raise InputError(
            "snapshots have no vertex indices, so no index maps",
            key_path="--index-maps",
            hint="compare the bundles built from them for index maps",
        )
    rules = None
    if args.spec:
        from graphmill.spec import load_spec

        rules = load_spec(args.spec).drift_gate.rules
    result = compare_bundles(args.old, args.new, rules=rules)
    if args.junit:
        result.write_junit(args.junit)
    if args.report:
        result.write_json(args.report)
    if args.index_maps:
        result.write_index_maps(args.index_maps)
    if args.json:
        print(json.dumps(result.to_dict(), sort_keys=True))
    else:
        result.render(console)
    if not result.passed:  # the one line on stderr, as for every failure
        errors = result.document["gate"]["counts"]["error"]
        print(
            f"graphmill: drift gate failed with {plural(errors, 'error finding')}",
            file=sys.stderr,
        )
    return int(result.exit_code)
