"""Benchmark: pull + check + build of a large synthetic graph from Parquet table files.

Generates a heterogeneous graph with string IDs (3 vertex types, 3 relations, a few
properties) as Parquet files, vectorized with numpy and pyarrow, then measures in one run:

* graphmill: ``pull`` (table-files source to snapshot), ``check`` and ``build`` wall time,
  pull + build throughput in edges per second, peak RSS of each stage (sampled from
  ``/proc/self/status`` in a thread every 20 ms) and the bundle's size on disk;
* the floor: plain pyarrow reading every input file and writing it again as Parquet (zstd),
  the least any Parquet-to-Parquet pipeline has to do.

Usage (from the repo root)::

    .venv/bin/python bench/bench_build.py                # 1M vertices, 10M edges
    .venv/bin/python bench/bench_build.py --quick        # 100k vertices, 1M edges
    .venv/bin/python bench/bench_build.py --vertices 2000000 --edges 20000000 --keep

Figures are printed, never asserted: this is a measurement, not a test.
"""

from __future__ import annotations

import argparse
import resource
import shutil
import tempfile
import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

#: vertex type -> (share of all vertices, ID prefix)
VERTEX_TYPES = {"account": (0.6, "acc"), "article": (0.3, "art"), "venue": (0.1, "ven")}
#: relation (source, name, target) -> share of all edges
RELATIONS = {
    ("account", "follows", "account"): 0.4,
    ("account", "reads", "article"): 0.4,
    ("article", "shown_at", "venue"): 0.2,
}
PAGE = 1 << 20


class PeakSampler:
    """Samples this process's resident set size in a thread; ``peak`` is the largest seen."""

    def __init__(self, interval_s: float = 0.02) -> None:
        self.interval_s = interval_s
        self.peak = 0
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)

    @staticmethod
    def rss_bytes() -> int:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("VmRSS:"):
                    return int(line.split()[1]) * 1024
        return 0

    def _run(self) -> None:
        while not self._stop.is_set():
            self.peak = max(self.peak, self.rss_bytes())
            self._stop.wait(self.interval_s)

    def __enter__(self) -> PeakSampler:
        self.peak = self.rss_bytes()
        self._thread.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self._stop.set()
        self._thread.join()
        self.peak = max(self.peak, self.rss_bytes())


@contextmanager
def stage(name: str, figures: dict[str, dict[str, float]]) -> Iterator[None]:
    """Time a stage and sample its peak RSS into ``figures[name]``."""
    started = time.perf_counter()
    with PeakSampler() as sampler:
        before = sampler.peak
        yield
    seconds = time.perf_counter() - started
    figures[name] = {"seconds": seconds, "peak_rss": sampler.peak, "rss_before": before}


def string_ids(prefix: str, count: int) -> pa.Array:
    """``prefix`` + zero-padded decimal, for 0..count-1 (vectorized)."""
    digits = pc.utf8_lpad(pc.cast(pa.array(np.arange(count)), pa.string()), 8, "0")
    return pc.binary_join_element_wise(prefix, digits, "")


def generate(folder: Path, vertices: int, edges: int, seed: int) -> dict[str, Any]:
    """Write one Parquet file per vertex type and relation; return the source entries."""
    rng = np.random.default_rng(seed)
    folder.mkdir(parents=True, exist_ok=True)
    ids: dict[str, pa.Array] = {}
    vertex_files, edge_files = [], []
    for name, (share, prefix) in VERTEX_TYPES.items():
        n = max(1, int(vertices * share))
        ids[name] = string_ids(prefix, n)
        columns: dict[str, Any] = {"id": ids[name]}
        if name == "account":
            columns["age"] = rng.integers(18, 90, n)
            columns["score"] = rng.lognormal(0.0, 1.0, n)
            columns["tier"] = pa.array(np.array(["basic", "plus", "pro"])[rng.integers(0, 3, n)])
        elif name == "article":
            columns["words"] = rng.integers(50, 5000, n)
        else:
            columns["region"] = pa.array(np.array(["n", "e", "s", "w"])[rng.integers(0, 4, n)])
        path = folder / f"{name}.parquet"
        pq.write_table(pa.table(columns), path, compression="zstd", row_group_size=PAGE)
        vertex_files.append({"path": str(path), "id_column": "id", "type": name})
    for (source, rel, target), share in RELATIONS.items():
        n = int(edges * share)
        src = pc.take(ids[source], pa.array(rng.integers(0, len(ids[source]), n)))
        dst = pc.take(ids[target], pa.array(rng.integers(0, len(ids[target]), n)))
        path = folder / f"{source}.{rel}.{target}.parquet"
        table = pa.table({"src": src, "dst": dst})
        pq.write_table(table, path, compression="zstd", row_group_size=PAGE)
        del src, dst, table
        edge_files.append(
            {"path": str(path), "source_column": "src", "target_column": "dst", "relation": rel}
        )
    return {"kind": "table-files", "vertex_files": vertex_files, "edge_files": edge_files}


def bench_spec(source: dict[str, Any], out: Path) -> dict[str, Any]:
    """The pipeline spec the benchmark runs (a mapping, as parsed from YAML)."""
    return {
        "spec_version": 1,
        "name": "bench_build",
        "source": source,
        "vertex_types": {
            "account": {
                "properties": {
                    "age": {"kind": "integer"},
                    "score": {"kind": "float"},
                    "tier": {"kind": "string"},
                }
            },
            "article": {"properties": {"words": {"kind": "integer"}}},
            "venue": {"properties": {"region": {"kind": "string"}}},
        },
        "relations": [{"from": s, "name": r, "to": t} for (s, r, t) in RELATIONS],
        "features": {
            "account": [
                {"property": "age", "encoding": "standardize"},
                {"property": "score", "encoding": "log"},
            ],
            "article": [{"property": "words", "encoding": "min-max"}],
            "venue": [{"property": "region", "encoding": "one-hot"}],
        },
        "label": {"vertex_type": "account", "property": "tier"},
        "split": {"method": "stratified", "seed": 1},
        # Random edges repeat and loop now and then: report, do not fail.
        "checks": {"severity": {"repeated-edge": "info", "self-loop": "info"}},
        "output": {"bundle": str(out / "bundle"), "snapshot": str(out / "snapshot")},
    }


def floor(source: dict[str, Any], out: Path) -> None:
    """Plain pyarrow: read every input file and write it again."""
    out.mkdir(parents=True, exist_ok=True)
    for entry in source["vertex_files"] + source["edge_files"]:
        path = Path(entry["path"])
        pq.write_table(pq.read_table(path), out / path.name, compression="zstd")


def folder_bytes(path: Path) -> int:
    return sum(p.stat().st_size for p in path.rglob("*") if p.is_file())


def run(vertices: int, edges: int, seed: int, workdir: Path) -> dict[str, Any]:
    from graphmill.pipeline import Pipeline
    from graphmill.spec import spec_from_dict

    figures: dict[str, dict[str, float]] = {}
    with stage("generate", figures):
        source = generate(workdir / "input", vertices, edges, seed)
    spec = spec_from_dict(bench_spec(source, workdir / "out"), base_dir=workdir)
    pipeline = Pipeline(spec)
    with stage("floor", figures):
        floor(source, workdir / "floor")
    with stage("pull", figures):
        pulled = pipeline.pull()
    with stage("check", figures):
        report = pipeline.check()
    with stage("build", figures):
        pipeline.build(report=report, even_if_failing=True)
    total_edges = sum(pulled.edge_counts.values())
    return {
        "figures": figures,
        "vertices": sum(pulled.vertex_counts.values()),
        "edges": total_edges,
        "input_bytes": folder_bytes(workdir / "input"),
        "bundle_bytes": folder_bytes(spec.output.bundle),
        "report_passed": report.passed,
    }


def render(result: dict[str, Any]) -> str:
    f = result["figures"]
    mib = 1024 * 1024
    pull_build = f["pull"]["seconds"] + f["build"]["seconds"]
    peak = max(f[s]["peak_rss"] for s in ("pull", "check", "build"))
    rows = [
        f"graph: {result['vertices']:,} vertices, {result['edges']:,} edges; "
        f"input {result['input_bytes'] / mib:,.1f} MiB of Parquet",
    ]
    for name in ("generate", "floor", "pull", "check", "build"):
        seconds, peak_mib = f[name]["seconds"], f[name]["peak_rss"] / mib
        growth = (f[name]["peak_rss"] - f[name]["rss_before"]) / mib
        rows.append(
            f"  {name:<9}{seconds:8.2f} s   peak RSS {peak_mib:9,.0f} MiB "
            f"(+{growth:,.0f} MiB over the stage's start)"
        )
    rows += [
        f"pull + build: {pull_build:.2f} s = {result['edges'] / pull_build:,.0f} edges/s",
        f"pull + check + build: {pull_build + f['check']['seconds']:.2f} s",
        f"floor (pyarrow read + write): {f['floor']['seconds']:.2f} s = "
        f"{result['edges'] / f['floor']['seconds']:,.0f} edges/s",
        f"ratio pull + build / floor: {pull_build / f['floor']['seconds']:.1f}x",
        f"bundle size: {result['bundle_bytes'] / mib:,.1f} MiB",
        f"peak RSS (pull, check, build): {peak / mib:,.0f} MiB = "
        f"{peak / max(result['bundle_bytes'], 1):.1f}x the bundle size",
        f"max RSS of the whole process (getrusage, includes generation): "
        f"{resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:,.0f} MiB",
    ]
    return "\n".join(rows)


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--vertices", type=int, default=1_000_000)
    parser.add_argument("--edges", type=int, default=10_000_000)
    parser.add_argument("--quick", action="store_true", help="100k vertices, 1M edges")
    parser.add_argument("--seed", type=int, default=20261202)
    parser.add_argument("--workdir", type=Path, help="where files go (default: a temp folder)")
    parser.add_argument("--keep", action="store_true", help="keep the generated files")
    args = parser.parse_args(argv)
    vertices, edges = (100_000, 1_000_000) if args.quick else (args.vertices, args.edges)
    workdir = args.workdir or Path(tempfile.mkdtemp(prefix="graphmill-bench-"))
    try:
        print(render(run(vertices, edges, args.seed, workdir)))
    finally:
        if not args.keep:
            shutil.rmtree(workdir, ignore_errors=True)
        else:
            print(f"files kept in {workdir}")


if __name__ == "__main__":
    main()
