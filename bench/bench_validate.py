"""Time ``graphmill.validate.run_checks`` on a synthetic snapshot, rule by rule.

One vertex type (string IDs, a float, an integer with a declared range, a label) and one
undirected relation with an edge property, with some dangling endpoints, repeats,
self-loops and NaNs so that every structure rule has offenders to count and sample.
Prints seconds per rule and in total, and edges per second. Figures, not assertions.

    .venv/bin/python bench/bench_validate.py            # 1M vertices, 5M edges
    .venv/bin/python bench/bench_validate.py --quick    # 100k vertices, 500k edges
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

from graphmill.validate import run_checks  # noqa: E402
from graphmill.validate._context import CheckContext  # noqa: E402
from graphmill.validate._runner import CHECKS  # noqa: E402
from tests.validate._graphs import publish  # noqa: E402


def _ids(codes: np.ndarray) -> pa.Array:
    return pc.binary_join_element_wise("acct-", pc.cast(pa.array(codes), pa.string()), "")


def synthetic(workdir: Path, vertices: int, edges: int, seed: int):
    rng = np.random.default_rng(seed)
    amount = rng.lognormal(3, 1, vertices)
    amount[rng.random(vertices) < 0.001] = np.nan
    age = rng.integers(10, 130, vertices)  # some above the declared max of 120
    group = pa.array(rng.integers(0, 50, vertices)).cast(pa.string())
    group = pc.if_else(pa.array(rng.random(vertices) < 0.3), pa.nulls(vertices, pa.string()), group)
    src = rng.integers(0, int(vertices * 1.001), edges)  # a few endpoints beyond the vertices
    dst = rng.integers(0, vertices, edges)
    dst[: edges // 100] = src[: edges // 100] % vertices  # 1% self-loops (or dangling ones)
    return publish(
        workdir,
        vertex_types={
            "account": {
                "properties": {
                    "amount": {"kind": "float", "min": 0},
                    "age": {"kind": "integer", "min": 0, "max": 120},
                    "group": {"kind": "string"},
                }
            }
        },
        relations=[
            {
                "from": "account",
                "name": "pays",
                "to": "account",
                "undirected": True,
                "properties": {"weight": {"kind": "integer"}},
            }
        ],
        label={"vertex_type": "account", "property": "group"},
        vertices={
            "account": pa.table(
                {
                    "vertex_id": _ids(np.arange(vertices)),
                    "amount": amount,
                    "age": age,
                    "group": group,
                }
            )
        },
        edges={
            "account.pays.account": pa.table(
                {
                    "source_id": _ids(src),
                    "target_id": _ids(dst),
                    "weight": rng.integers(0, 3, edges),
                }
            )
        },
    )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--vertices", type=int, default=1_000_000)
    parser.add_argument("--edges", type=int, default=5_000_000)
    parser.add_argument("--quick", action="store_true", help="100k vertices, 500k edges")
    parser.add_argument("--seed", type=int, default=0)
    args = parser.parse_args()
    if args.quick:
        args.vertices, args.edges = 100_000, 500_000
    with tempfile.TemporaryDirectory() as tmp:
        started = time.perf_counter()
        spec, snapshot = synthetic(Path(tmp), args.vertices, args.edges, args.seed)
        print(
            f"snapshot: {args.vertices} vertices, {args.edges} edges "
            f"({time.perf_counter() - started:.1f} s to generate and pull)"
        )
        ctx = CheckContext(spec, snapshot)
        started = time.perf_counter()
        ctx.vertices("account"), ctx.edges(snapshot.relations[0])
        print(f"{'(read tables)':28s} {time.perf_counter() - started:7.2f} s")
        print(f"{'rule':28s} {'wall':>7s}   {'cpu':>7s}  (cpu: all threads of this process)")
        for rule, subjects, check in CHECKS:
            started, cpu = time.perf_counter(), time.process_time()
            for subject in subjects(ctx):
                check(ctx, subject)
            wall, cpu = time.perf_counter() - started, time.process_time() - cpu
            print(f"{rule:28s} {wall:7.2f} s {cpu:7.2f} s")
        started, cpu = time.perf_counter(), time.process_time()
        report = run_checks(spec, snapshot)
        total, cpu = time.perf_counter() - started, time.process_time() - cpu
        print(
            f"{'run_checks (all, fresh)':28s} {total:7.2f} s {cpu:7.2f} s  "
            f"= {args.edges / total / 1e6:.2f}M edges/s; {report.verdict()}"
        )
        with open("/proc/loadavg") as fh:
            print(f"load average during the run: {fh.read().split()[0]} (2 cores)")


if __name__ == "__main__":
    main()
