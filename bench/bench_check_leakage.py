"""Benchmark: what the leakage audit adds to ``graphmill check``.

On the graph of ``bench_engine.py`` (accounts and shops, string IDs, planted defects; its
spec: a stratified label on accounts with a feature, so ``feature-copies-label`` applies),
pulled once, then, each in this process:

* **check, audit off**: ``run_checks`` with the four audited rules set ``off`` in
  ``checks.severity`` (what a spec must say to skip the audit; nothing skips it silently);
* **check**: ``run_checks`` as the spec stands (the audit computes the parts);
* **audit alone**: :func:`graphmill.validate._leakage_checks.leakage_checks`;
* the same three with a links task on ``account.knows.account`` added (``--links``, on by
  default): the edge parts and the three edge rules too.

Prints seconds per row and the audit's share of the check. Usage (repo root)::

    .venv/bin/python bench/bench_check_leakage.py --vertices 100000 --edges 1000000

Figures are printed, never asserted: this is a measurement, not a test.
"""

from __future__ import annotations

import argparse
import shutil
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_engine import generate, spec_document

from graphmill.engine import open_engine
from graphmill.pipeline import Pipeline
from graphmill.spec import spec_from_dict
from graphmill.validate import run_checks
from graphmill.validate._leakage_checks import CHECKED, leakage_checks


def timed(fn: Any) -> tuple[float, Any]:
    started = time.perf_counter()
    result = fn()
    return time.perf_counter() - started, result


def measure(document: dict[str, Any], out: Path, label: str) -> list[str]:
    spec = spec_from_dict(document, base_dir=out)
    snapshot = Pipeline(spec).snapshot()
    off = {**document, "checks": {"severity": dict.fromkeys(CHECKED, "off")}}
    spec_off = spec_from_dict(off, base_dir=out)
    rows = []
    t_off, _ = timed(lambda: run_checks(spec_off, snapshot))
    t_on, _ = timed(lambda: run_checks(spec, snapshot))
    with open_engine(spec) as engine:
        t_alone, (found, evaluated) = timed(lambda: leakage_checks(spec, snapshot, engine))
    rows.append(f"{label}: check with the audit off   {t_off:7.1f} s")
    rows.append(f"{label}: check                      {t_on:7.1f} s")
    rows.append(
        f"{label}: audit alone                {t_alone:7.1f} s  "
        f"({len(evaluated)} checks, {len(found)} findings; "
        f"{100 * (t_on - t_off) / max(t_on, 1e-9):.0f}% of the check)"
    )
    return rows


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--vertices", type=int, default=100_000, help="accounts")
    parser.add_argument("--edges", type=int, default=1_000_000)
    parser.add_argument("--engine", default="local", help="engine kind")
    parser.add_argument("--no-links", action="store_true", help="skip the links-task rows")
    parser.add_argument("--seed", type=int, default=20261202)
    args = parser.parse_args(argv)
    workdir = Path(tempfile.mkdtemp(prefix="graphmill-check-leakage-"))
    try:
        source = generate(workdir / "input", args.vertices, args.edges, args.seed)
        out = workdir / "out"
        document = spec_document(source, out, {"kind": args.engine})
        spec = spec_from_dict(document, base_dir=out)
        seconds, _ = timed(lambda: Pipeline(spec).pull())
        print(
            f"graph: {args.vertices:,} accounts, ~{args.edges:,} edges; pulled in {seconds:.1f} s"
        )
        rows = measure(document, out, "label")
        if not args.no_links:
            plain = {k: v for k, v in document.items() if k not in ("label", "split")}
            links = {**plain, "task": {"kind": "links", "relations": ["account.knows.account"]}}
            rows += measure(links, out, "links")
        print("\n".join(rows))
    finally:
        shutil.rmtree(workdir, ignore_errors=True)


if __name__ == "__main__":
    main()
