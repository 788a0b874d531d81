"""Benchmark: comparing two versions of a 10M-edge bundle against reading them once.

Builds two bundles with graphmill (pull + build, no checks) from the synthetic graph of
``bench_build.py`` (1M vertices, 10M edges): the second version drops 5% of every relation's
edges, adds 5% more accounts with edges of their own, and scales the ``score`` feature by 1.3.
Then measures, in one run and one process:

* the floor: pyarrow reading every Parquet table of both bundles once (all columns);
* ``compare_bundles(old, new, verify=False)``: the comparison without hashes;
* ``compare_bundles(old, new)``: the default, every file of both bundles verified against its
  sha256 while the comparison runs (the tables it reads hashed from the bytes it parses).

The three are timed in interleaved rounds (``--rounds``, default 3) and the best of each kept,
since other work on a shared machine only ever adds time; the ratio is the comparison's
best over the floor's best.

Usage (from the repo root)::

    .venv/bin/python bench/bench_compare.py              # 1M vertices, 10M edges
    .venv/bin/python bench/bench_compare.py --quick      # 100k vertices, 1M edges
    .venv/bin/python bench/bench_compare.py --keep DIR --rounds 8   # keep, reuse, 8 rounds

Figures are printed, never asserted.
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_build import PAGE, PeakSampler, bench_spec, generate, string_ids


def next_version(source: dict[str, Any], folder: Path, seed: int) -> dict[str, Any]:
    """Copy the input files into ``folder`` with the second version's changes."""
    rng = np.random.default_rng(seed + 1)
    folder.mkdir(parents=True, exist_ok=True)
    new_accounts = None
    vertex_files, edge_files = [], []
    for entry in source["vertex_files"]:
        table = pq.read_table(entry["path"])
        if entry["type"] == "account":
            n = table.num_rows // 20
            new_accounts = string_ids("acn", n)
            extra = pa.table(
                {
                    "id": new_accounts,
                    "age": rng.integers(18, 90, n),
                    "score": rng.lognormal(0.0, 1.0, n),
                    "tier": pa.array(np.array(["basic", "plus", "pro"])[rng.integers(0, 3, n)]),
                }
            ).cast(table.schema)
            table = pa.concat_tables([table, extra])
            table = table.set_column(2, "score", pc.multiply(table.column("score"), 1.3))
        path = folder / Path(entry["path"]).name
        pq.write_table(table, path, compression="zstd", row_group_size=PAGE)
        vertex_files.append({**entry, "path": str(path)})
    assert new_accounts is not None
    for entry in source["edge_files"]:
        table = pq.read_table(entry["path"])
        table = table.filter(pa.array(rng.random(table.num_rows) >= 0.05))
        if Path(entry["path"]).name.startswith("account.follows"):
            n = len(new_accounts) * 4
            src = pc.take(new_accounts, pa.array(rng.integers(0, len(new_accounts), n)))
            dst = pc.take(table.column("dst"), pa.array(rng.integers(0, table.num_rows, n)))
            table = pa.concat_tables([table, pa.table({"src": src, "dst": dst})])
        path = folder / Path(entry["path"]).name
        pq.write_table(table, path, compression="zstd", row_group_size=PAGE)
        edge_files.append({**entry, "path": str(path)})
    return {"kind": "table-files", "vertex_files": vertex_files, "edge_files": edge_files}


def build(source: dict[str, Any], out: Path, workdir: Path) -> Path:
    from graphmill.pipeline import Pipeline
    from graphmill.snapshot import Snapshot
    from graphmill.spec import spec_from_dict
    from graphmill.transform import build_bundle

    spec = spec_from_dict(bench_spec(source, out), base_dir=workdir)
    Pipeline(spec).pull()
    build_bundle(spec, Snapshot.open(spec.output.snapshot))
    shutil.rmtree(spec.output.snapshot)
    return spec.output.bundle


def read_all(bundles: list[Path]) -> int:
    rows = 0
    for bundle in bundles:
        for path in sorted((bundle / "tables").rglob("*.parquet")):
            rows += pq.read_table(path).num_rows
    return rows


CPU: dict[str, float] = {}


def timed(fn: Any, name: str = "") -> tuple[float, int, Any]:
    """Wall seconds, peak RSS and the value; the CPU seconds of all threads go to CPU[name]
    (the least seen), steadier than wall time when other work shares the cores."""
    started, cpu = time.perf_counter(), time.process_time()
    with PeakSampler() as sampler:
        value = fn()
    CPU[name] = min(CPU.get(name, float("inf")), time.process_time() - cpu)
    return time.perf_counter() - started, sampler.peak, value


def run(vertices: int, edges: int, seed: int, workdir: Path, rounds: int = 3) -> None:
    from graphmill.compare import compare_bundles

    started = time.perf_counter()
    old, new = workdir / "v1" / "bundle", workdir / "v2" / "bundle"
    if old.is_dir() and new.is_dir():  # --keep DIR of an earlier run: measure again
        print(f"reusing the bundles in {workdir}")
    else:
        first = generate(workdir / "input1", vertices, edges, seed)
        second = next_version(first, workdir / "input2", seed)
        old = build(first, workdir / "v1", workdir)
        new = build(second, workdir / "v2", workdir)
        print(f"prepared two bundles in {time.perf_counter() - started:.1f} s", flush=True)
    # Interleaved rounds, best of each: other work on a shared machine only ever adds time.
    floor_s = plain_s = checked_s = float("inf")
    for _ in range(rounds):
        s, floor_peak, rows = timed(lambda: read_all([old, new]), "floor")
        floor_s = min(floor_s, s)
        s, plain_peak, result = timed(lambda: compare_bundles(old, new, verify=False), "plain")
        plain_s = min(plain_s, s)
        s, checked_peak, _ = timed(lambda: compare_bundles(old, new), "checked")
        checked_s = min(checked_s, s)
    load = ", ".join(f"{x:.1f}" for x in os.getloadavg())
    print(f"best of {rounds} interleaved rounds ({time.strftime('%Y-%m-%d %H:%M')}, load {load}):")
    doc = result.to_dict()
    kept = sum(e["kept"] for e in doc["relations"].values())
    total = sum(e["old"] for e in doc["relations"].values())
    print(f"edges per bundle: {total:,} (old), kept {kept:,}; rows read by the floor: {rows:,}")
    mib = 1024 * 1024
    print(
        f"floor: read both bundles' Parquet tables  {floor_s:7.2f} s  {floor_peak / mib:7.0f} MiB"
    )
    print(
        f"compare (verify=False)                    {plain_s:7.2f} s  {plain_peak / mib:7.0f} MiB"
        f"  {plain_s / floor_s:.2f}x the floor"
    )
    print(
        f"compare (default: every sha256 verified)  {checked_s:7.2f} s  "
        f"{checked_peak / mib:7.0f} MiB  {checked_s / floor_s:.2f}x the floor"
    )
    f = CPU["floor"]
    print(
        f"CPU seconds (all threads): floor {f:.2f}, compare {CPU['plain']:.2f} "
        f"({CPU['plain'] / f:.2f}x), with sha256 {CPU['checked']:.2f} ({CPU['checked'] / f:.2f}x)"
    )


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--vertices", type=int, default=1_000_000)
    parser.add_argument("--edges", type=int, default=10_000_000)
    parser.add_argument("--quick", action="store_true", help="100k vertices, 1M edges")
    parser.add_argument("--seed", type=int, default=7)
    parser.add_argument("--rounds", type=int, default=3, help="timed rounds (best is kept)")
    parser.add_argument(
        "--keep", metavar="DIR", help="work in DIR and keep the bundles (reused when there)"
    )
    args = parser.parse_args(argv)
    vertices, edges = (100_000, 1_000_000) if args.quick else (args.vertices, args.edges)
    if args.keep:
        run(vertices, edges, args.seed, Path(args.keep), args.rounds)
        return
    with tempfile.TemporaryDirectory(prefix="graphmill-bench-compare-") as folder:
        run(vertices, edges, args.seed, Path(folder), args.rounds)


if __name__ == "__main__":
    main()
