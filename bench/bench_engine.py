"""Benchmark: graphmill's engines against the plain pyarrow floor, in one run.

Generates the graph of issue 10 as Parquet table files: accounts and shops with string IDs
(``--vertices`` accounts, one shop per 20 accounts), ``--edges`` edges in two relations,
``account.knows.account`` (undirected, stored both ways) and ``account.buys.shop``, with
planted defects: dangling edges (unknown account IDs), repeated edges and one-way edges
(reverses removed). Then, each in a fresh child process so that peak memory is its own:

* **floor**: pyarrow reads every input file and writes it again (zstd);
* **reference**, **local** and **spark**: ``graphmill`` pull + check + build on that engine
  (spark on ``--cluster``, ``local[2]`` by default; its JVM start is timed apart as "start").

Prints seconds per stage, peak RSS (the child's ``ru_maxrss``; for spark the Python side
only, the JVM is a process of its own), the ratio to the floor and to the local engine, and
whether the engines wrote byte-identical snapshots, reports and bundles (compared through
``snapshot.json``, the report and ``manifest.json``, which hold every file's sha256).

Usage (from the repo root)::

    .venv/bin/python bench/bench_engine.py                       # 1M accounts, 10M edges
    .venv/bin/python bench/bench_engine.py --vertices 100000 --edges 1000000
    .venv/bin/python bench/bench_engine.py --engines local --memory-limit 1GiB
    .venv/bin/python bench/bench_engine.py --engines local,spark --vertices 100000 \
        --edges 1000000 --cluster 'local[2]'

Figures are printed, never asserted: this is a measurement, not a test.
"""

from __future__ import annotations

import argparse
import dataclasses
import json
import os
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

ROW_GROUP = 1 << 20
DANGLING = 5_000  # edges to accounts that do not exist
REPEAT_SHARE = 0.02  # share of edges copied once more
ONE_WAY = 16_000  # knows edges whose stored reverse is removed


def ids(prefix: str, index: np.ndarray) -> pa.Array:
    digits = pc.utf8_lpad(pc.cast(pa.array(index), pa.string()), 8, "0")
    return pc.binary_join_element_wise(prefix, digits, "")


def generate(folder: Path, accounts: int, edges: int, seed: int) -> dict[str, Any]:
    """Write the Parquet files; return the spec's ``source`` section."""
    rng = np.random.default_rng(seed)
    folder.mkdir(parents=True, exist_ok=True)
    shops = max(1, accounts // 20)
    tiers = np.array(["basic", "plus", "pro"])
    pq.write_table(
        pa.table(
            {
                "id": ids("acc", np.arange(accounts)),
                "age": rng.integers(18, 90, accounts),
                "score": rng.lognormal(0.0, 1.0, accounts),
                "tier": pa.array(tiers[rng.integers(0, 3, accounts)]),
            }
        ),
        folder / "accounts.parquet",
        compression="zstd",
        row_group_size=ROW_GROUP,
    )
    regions = np.array(["north", "east", "south", "west"])
    pq.write_table(
        pa.table(
            {"id": ids("shop", np.arange(shops)), "region": regions[rng.integers(0, 4, shops)]}
        ),
        folder / "shops.parquet",
        compression="zstd",
    )
    half = edges // 2
    pairs = half // 2  # knows: each pair stored both ways
    a, b = rng.integers(0, accounts, pairs), rng.integers(0, accounts, pairs)
    src, dst = np.concatenate([a, b]), np.concatenate([b, a])
    keep = np.ones(len(src), dtype=bool)
    keep[pairs + rng.choice(pairs, min(ONE_WAY, pairs), replace=False)] = False  # one-way
    src, dst = src[keep], dst[keep]
    _edge_file(folder / "knows.parquet", src, dst, "acc", "acc", accounts, rng)
    src, dst = rng.integers(0, accounts, edges - half), rng.integers(0, shops, edges - half)
    _edge_file(folder / "buys.parquet", src, dst, "acc", "shop", accounts, rng)
    return {
        "kind": "table-files",
        "vertex_files": [
            {"path": str(folder / "accounts.parquet"), "id_column": "id", "type": "account"},
            {"path": str(folder / "shops.parquet"), "id_column": "id", "type": "shop"},
        ],
        "edge_files": [
            {"path": str(folder / f"{rel}.parquet"), "source_column": "src",
             "target_column": "dst", "relation": rel}
            for rel in ("knows", "buys")
        ],
    }  # fmt: skip


def _edge_file(
    path: Path, src: np.ndarray, dst: np.ndarray, sp: str, dp: str, accounts: int, rng: Any
) -> None:
    copies = rng.choice(len(src), int(len(src) * REPEAT_SHARE), replace=False)
    src, dst = np.concatenate([src, src[copies]]), np.concatenate([dst, dst[copies]])
    order = rng.permutation(len(src))
    src, dst = src[order], dst[order]
    ghosts = rng.choice(len(src), min(DANGLING // 2, len(src)), replace=False)
    src[ghosts] = accounts + rng.integers(0, 1000, len(ghosts))  # no such account
    table = pa.table({"src": ids(sp, src), "dst": ids(dp, dst)})
    pq.write_table(table, path, compression="zstd", row_group_size=ROW_GROUP)


def spec_document(source: dict[str, Any], out: Path, engine: dict[str, Any]) -> dict[str, Any]:
    return {
        "spec_version": 1,
        "name": "bench_engine",
        "source": source,
        "vertex_types": {
            "account": {
                "properties": {
                    "age": {"kind": "integer"},
                    "score": {"kind": "float"},
                    "tier": {"kind": "string"},
                }
            },
            "shop": {"properties": {"region": {"kind": "string"}}},
        },
        "relations": [
            {"from": "account", "name": "knows", "to": "account", "undirected": True},
            {"from": "account", "name": "buys", "to": "shop"},
        ],
        "features": {
            "account": [{"property": "score", "encoding": "standardize"}],
            "shop": [{"property": "region", "encoding": "one-hot"}],
        },
        "label": {"vertex_type": "account", "property": "tier"},
        "split": {"method": "stratified", "seed": 1},
        "edges": {"duplicates": "drop", "undirected": "symmetrize"},
        "engine": engine,
        "output": {"bundle": str(out / "bundle"), "snapshot": str(out / "snapshot")},
    }


# ------------------------------------------------------------------ children


def child_floor(source: dict[str, Any], out: Path) -> dict[str, Any]:
    out.mkdir(parents=True, exist_ok=True)
    started, cpu = time.perf_counter(), time.process_time()
    for entry in source["vertex_files"] + source["edge_files"]:
        path = Path(entry["path"])
        pq.write_table(pq.read_table(path), out / path.name, compression="zstd")
    return {
        "seconds": {"total": time.perf_counter() - started},
        "cpu_seconds": {"total": time.process_time() - cpu},
        "load": [os.getloadavg()[0]],
    }


def child_engine(source: dict[str, Any], out: Path, engine: dict[str, Any]) -> dict[str, Any]:
    from bench_build import stage

    from graphmill.pipeline import Pipeline
    from graphmill.spec import EngineSpec, spec_from_dict

    # The engine is applied as --engine and the other flags apply it, not written into the
    # spec: the spec's hash (recorded in the bundle's lineage) covers the engine section.
    spec = spec_from_dict(spec_document(source, out, {}), base_dir=out)
    spec = dataclasses.replace(spec, engine=EngineSpec(**engine))
    pipeline = Pipeline(spec)
    figures: dict[str, dict[str, float]] = {}
    cpu: dict[str, float] = {}
    load = [os.getloadavg()[0]]
    report: Any = None

    def timed(name: str, run: Any) -> Any:
        started = time.process_time()  # every thread of the process, DuckDB's included
        with stage(name, figures):
            result = run()
        cpu[name] = time.process_time() - started
        load.append(os.getloadavg()[0])
        return result

    if engine["kind"] == "spark":  # the JVM starts once per process, before the first stage
        from graphmill.engine.spark._session import session_for

        timed("start", lambda: session_for(pipeline.spec.engine))
    timed("pull", pipeline.pull)
    report = timed("check", pipeline.check)
    timed("build", lambda: pipeline.build(report=report, even_if_failing=True))
    seconds = {name: f["seconds"] for name, f in figures.items()}
    seconds["total"] = sum(seconds.values())
    cpu["total"] = sum(cpu.values())
    return {
        "seconds": seconds,
        "cpu_seconds": cpu,
        "load": load,
        "stage_peak_rss": {n: f["peak_rss"] for n, f in figures.items()},
    }


def run_child(args: list[str]) -> dict[str, Any]:
    """Run one child; its stderr passes through, so a failure shows its own message."""
    done = subprocess.run([sys.executable, __file__, *args], stdout=subprocess.PIPE, text=True)
    if done.returncode:
        raise SystemExit(f"the {args[1]} run failed (exit {done.returncode}); see above")
    return dict(json.loads(done.stdout.strip().splitlines()[-1]))


def outputs_digest(out: Path) -> dict[str, bytes]:
    """The files that name every other output file's sha256."""
    return {
        name: (out / name).read_bytes()
        for name in ("snapshot/snapshot.json", "snapshot.report.json", "bundle/manifest.json")
    }


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--vertices", type=int, default=1_000_000, help="accounts")
    parser.add_argument("--edges", type=int, default=10_000_000)
    parser.add_argument("--engines", default="reference,local", help="comma-separated kinds")
    parser.add_argument("--memory-limit", help="engine.memory_limit for the local engine")
    parser.add_argument("--threads", type=int, help="engine.threads")
    parser.add_argument("--cluster", default="local[2]", help="engine.cluster for spark")
    parser.add_argument("--seed", type=int, default=20261202)
    parser.add_argument("--workdir", type=Path, help="where files go (default: a temp folder)")
    parser.add_argument("--keep", action="store_true", help="keep the generated files")
    parser.add_argument("--child", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    workdir = args.workdir or Path(tempfile.mkdtemp(prefix="graphmill-engine-"))
    if args.child:
        source = json.loads((workdir / "source.json").read_text())
        engine = {"kind": args.child}
        if args.memory_limit:
            engine["memory_limit"] = args.memory_limit
        if args.threads:
            engine["threads"] = args.threads
        if args.child == "spark":
            engine["cluster"] = args.cluster
        result = (
            child_floor(source, workdir / "floor")
            if args.child == "floor"
            else child_engine(source, workdir / args.child, engine)
        )
        result["peak_rss"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
        print(json.dumps(result))
        return
    try:
        started = time.perf_counter()
        source = generate(workdir / "input", args.vertices, args.edges, args.seed)
        (workdir / "source.json").write_text(json.dumps(source))
        print(f"generated in {time.perf_counter() - started:.1f} s under {workdir}")
        extra = ["--workdir", str(workdir)]
        extra += ["--memory-limit", args.memory_limit] if args.memory_limit else []
        extra += ["--threads", str(args.threads)] if args.threads else []
        extra += ["--cluster", args.cluster]
        figures = {"floor": run_child(["--child", "floor", *extra])}
        kinds = [k for k in args.engines.split(",") if k]
        for kind in kinds:
            figures[kind] = run_child(["--child", kind, *extra])
        print(render(figures, args))
        if len(kinds) > 1:
            digests = {k: outputs_digest(workdir / k) for k in kinds}
            first = "local" if "local" in kinds else kinds[0]
            for kind in kinds:
                if kind != first:
                    same = digests[kind] == digests[first]
                    print(f"{kind} outputs byte-identical to {first}: {'yes' if same else 'NO'}")
    finally:
        if args.keep:
            print(f"files kept in {workdir}")
        else:
            shutil.rmtree(workdir, ignore_errors=True)


def render(figures: dict[str, dict[str, Any]], args: argparse.Namespace) -> str:
    mib = 1024 * 1024
    floor = figures["floor"]["seconds"]["total"]
    cpu_floor = figures["floor"]["cpu_seconds"]["total"]
    rows = [
        f"graph: {args.vertices:,} accounts, {args.vertices // 20:,} shops, ~{args.edges:,} edges",
        f"{'run':<10}{'start':>8}{'pull':>8}{'check':>8}{'build':>8}{'total':>9}{'x floor':>9}"
        f"{'x local':>9}{'peak RSS':>12}",
    ]
    local = figures.get("local", {}).get("seconds", {}).get("total")
    cpu_rows = ["CPU seconds (every thread of the run's process; steadier on a busy machine):"]
    for name, fig in figures.items():
        c = fig["cpu_seconds"]
        stages = ("start", "pull", "check", "build")
        parts = "".join(f"{c[k]:8.1f}" if k in c else " " * 8 for k in stages)
        load = ", ".join(f"{x:.1f}" for x in fig["load"])
        cpu_rows.append(
            f"{name:<10}{parts}{c['total']:9.1f}{c['total'] / cpu_floor:9.1f}"
            f"   (load average {load})"
        )
    for name, fig in figures.items():
        s, peaks = fig["seconds"], fig.get("stage_peak_rss", {})
        stages = ("start", "pull", "check", "build")
        parts = "".join(f"{s[k]:8.1f}" if k in s else " " * 8 for k in stages)
        ratio = f"{s['total'] / local:9.2f}" if local and name != "floor" else " " * 9
        rows.append(
            f"{name:<10}{parts}{s['total']:9.1f}{s['total'] / floor:9.1f}{ratio}"
            f"{fig['peak_rss'] / mib:9,.0f} MiB"
            + (
                "  (stage peaks: "
                + ", ".join(f"{k} {v / mib:,.0f}" for k, v in peaks.items())
                + " MiB)"
                if peaks
                else ""
            )
        )
    return "\n".join(rows + cpu_rows)


if __name__ == "__main__":
    main()
