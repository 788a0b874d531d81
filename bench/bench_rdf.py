"""Benchmark: RDF dumps through ``rdf-file`` and ``rdf-store``, against pyoxigraph's bare parse.

Generates N-Triples dumps of about the sizes asked (``--sizes``, in triples; default 5M and
50M): per person an ``rdf:type``, a name, an integer age, an English label, an undeclared
comment (to be skipped) and six ``knows`` edges, written with numpy and pyarrow a slice of
people at a time (so generating 50M triples needs little memory), plus a gzip copy of the
largest (``gzip -1``). Dumps are kept in ``--workdir`` and reused by later runs.

Every measurement runs in its own process, so its peak RSS (``VmHWM``) is its own:

* ``bare``: pyoxigraph's streaming parse of the file, every quad visited, nothing kept;
* ``rdf-file`` / ``rdf-store`` (``--kinds``): the source opened and every work unit read and
  staged as the pull does (``graphmill.snapshot.Stager``), i.e. everything the source does
  before the snapshot's merge; ``--merge`` adds the merge (the whole ``pull``), whose memory
  belongs to the snapshot engine, not to the source;
* ``rdf-file-stream``: ``rdf-file`` with its single-stream parse (no worker processes), to
  compare the two in one run.

``rdf-store`` runs with its on-disk store (``source.store_folder``). CPU seconds include
worker processes (``rdf-file`` parses dumps of 64 MiB or more in two); "+workers" is their
peak RSS (the largest times their number); "together" is the largest sum of the process's
and its workers' RSS, sampled every 0.1 s (they peak at different times). "digest" is an
order-free digest of the staged rows of every unit (:func:`staged_digest`): ``rdf-file`` and
``rdf-store`` on the same dump must print the same. "load" is the machine's load average
during the run. Figures are printed, never asserted. Usage (from the repo root)::

    .venv/bin/python bench/bench_rdf.py                       # 5M and 50M triples
    .venv/bin/python bench/bench_rdf.py --sizes 100000 1000000 --kinds rdf-file
"""

from __future__ import annotations

import argparse
import contextlib
import hashlib
import json
import os
import resource
import shutil
import subprocess
import sys
import threading
import time
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

EX = "http://example.org/"
TYPE = "<http://www.w3.org/1999/02/22-rdf-syntax-ns#type>"
INTEGER = "<http://www.w3.org/2001/XMLSchema#integer>"
KNOWS_PER_PERSON = 6
TRIPLES_PER_PERSON = 5 + KNOWS_PER_PERSON
SLICE = 200_000  # people written at a time


def _text(block: pa.Array) -> str:
    return pc.binary_join(pa.ListArray.from_arrays([0, len(block)], block), "")[0].as_py()


def generate(path: Path, people: int, seed: int = 7) -> int:
    """Write the dump; return the number of triples."""
    rng = np.random.default_rng(seed)
    scratch = path.with_suffix(".writing")
    with open(scratch, "w", encoding="utf-8") as fh:
        for start in range(0, people, SLICE):
            count = min(SLICE, people - start)
            ids = pc.cast(pa.array(np.arange(start, start + count)), pa.string())
            subject = pc.binary_join_element_wise(f"<{EX}person/", ids, ">", "")

            def lines(predicate: str, objects: pa.Array, subjects: pa.Array = subject) -> pa.Array:
                return pc.binary_join_element_wise(
                    subjects, f"<{EX}{predicate}>", objects, ".\n", " "
                )

            ages = pc.cast(pa.array(rng.integers(1, 100, count)), pa.string())
            friends = rng.integers(0, people, count * KNOWS_PER_PERSON)
            blocks = [
                pc.binary_join_element_wise(subject, TYPE, f"<{EX}Person>", ".\n", " "),
                lines("name", pc.binary_join_element_wise('"Person number ', ids, '"', "")),
                lines("age", pc.binary_join_element_wise('"', ages, f'"^^{INTEGER}', "")),
                lines("label", pc.binary_join_element_wise('"p', ids, '"@en', "")),
                lines("comment", pc.binary_join_element_wise('"not declared ', ids, '"', "")),
                lines(
                    "knows",
                    pc.binary_join_element_wise(
                        f"<{EX}person/", pc.cast(pa.array(friends), pa.string()), ">", ""
                    ),
                    pc.take(subject, pa.array(np.repeat(np.arange(count), KNOWS_PER_PERSON))),
                ),
            ]
            for block in blocks:
                fh.write(_text(block))
    scratch.replace(path)
    return people * TRIPLES_PER_PERSON


def bench_spec(kind: str, data: Path, out: Path) -> dict[str, Any]:
    source: dict[str, Any] = {"kind": kind, "paths": [str(data)]}
    if kind == "rdf-store":
        source["store_folder"] = str(out / "store")
    return {
        "spec_version": 1,
        "source": source,
        "rdf": {"prefixes": {"ex": EX}, "languages": ["en", ""]},
        "vertex_types": {
            "person": {
                "match": "ex:Person",
                "properties": {
                    "name": {"from": "ex:name"},
                    "age": {"from": "ex:age"},
                    "label": {"from": "ex:label"},
                },
            }
        },
        "relations": [{"from": "person", "name": "knows", "to": "person", "match": "ex:knows"}],
        "output": {"bundle": str(out / "bundle"), "snapshot": str(out / "snapshot")},
    }


def bare_parse(data: Path) -> dict[str, float]:
    import pyoxigraph as ox

    started = time.perf_counter()
    fmt = ox.RdfFormat.N_TRIPLES
    if data.suffix == ".gz":
        import gzip

        with gzip.open(data, "rb") as fh:
            count = sum(1 for _ in ox.parse(fh, format=fmt))
    else:
        count = sum(1 for _ in ox.parse(path=str(data), format=fmt))
    return {"seconds": time.perf_counter() - started, "quads": count}


def source_run(kind: str, data: Path, out: Path, merge: bool) -> dict[str, float]:
    import pyarrow.parquet as pq

    from graphmill._progress import SilentProgress
    from graphmill.connectors import open_source
    from graphmill.snapshot import Stager, pull
    from graphmill.spec import spec_from_dict

    if kind == "rdf-file-stream":  # rdf-file with its single-stream parse whatever the size
        from graphmill.connectors.rdf import _lines

        _lines.PROCESSES_FROM = 1 << 62
        kind = "rdf-file"
    spec = spec_from_dict(bench_spec(kind, data, out))
    source = open_source(spec)
    started = time.perf_counter()
    if merge:
        info = pull(spec, source)
        rows = sum(info.vertex_counts.values()) + sum(info.edge_counts.values())
    else:
        stager = Stager(spec, source)
        stager.prepare()
        task = SilentProgress().task("bench")
        with source:
            opened = time.perf_counter()
            units = source.plan()
            for unit in units:
                stager.stage(unit, task)
        seconds = time.perf_counter() - started
        rows = sum(pq.read_metadata(p).num_rows for p in stager.parts(units))
        return {
            "seconds": seconds,
            "open_seconds": opened - started,
            "rows": rows,
            "digest": lambda: staged_digest([stager.parts([u]) for u in units]),
        }
    return {"seconds": time.perf_counter() - started, "rows": rows}


def staged_digest(parts: list[list[Path]]) -> str:
    """An order-free digest of the staged rows of every unit (a sum of row hashes per unit,
    with DuckDB): equal for two sources that staged the same rows in any order and pages."""
    import duckdb

    con = duckdb.connect(config={"memory_limit": "512MiB", "threads": 2})
    sums = []
    for files in parts:
        if not files:
            sums.append("-")
            continue
        n, total = con.execute(
            "SELECT count(*), sum(hash(t)::HUGEINT) FROM read_parquet(?) t",
            [[str(f) for f in files]],
        ).fetchone()
        sums.append(f"{n}:{total}")
    return hashlib.sha256("|".join(sums).encode()).hexdigest()[:16]


def peak_rss_mib() -> float:
    """This process's peak RSS (``VmHWM``: unlike ``ru_maxrss``, not inherited over exec)."""
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def tree_rss_mib() -> float:
    """RSS of this process and its child processes now (from ``/proc``)."""
    total = 0
    pids = ["self"]
    for task in Path("/proc/self/task").iterdir():
        with contextlib.suppress(OSError):
            pids += (task / "children").read_text().split()
    for pid in pids:
        with contextlib.suppress(OSError, ValueError, IndexError):
            status = Path(f"/proc/{pid}/status").read_text()
            total += int(status.split("VmRSS:")[1].split()[0])
    return total / 1024


class TreePeak(threading.Thread):
    """Samples :func:`tree_rss_mib` every ``every`` seconds; ``peak`` is the largest seen."""

    def __init__(self, every: float = 0.1) -> None:
        super().__init__(daemon=True)
        self.every, self.peak, self.done = every, 0.0, threading.Event()

    def run(self) -> None:
        while not self.done.wait(self.every):
            self.peak = max(self.peak, tree_rss_mib())


def child(mode: str, data: Path, out: Path, merge: bool) -> None:
    sampler = TreePeak()
    sampler.start()
    load = os.getloadavg()[0]
    result = bare_parse(data) if mode == "bare" else source_run(mode, data, out, merge)
    result["load"] = (load + os.getloadavg()[0]) / 2
    result["peak_rss_mib"] = peak_rss_mib()
    usage = resource.getrusage(resource.RUSAGE_SELF)
    workers = resource.getrusage(resource.RUSAGE_CHILDREN)  # rdf-file's parse workers
    result["cpu_seconds"] = sum(u.ru_utime + u.ru_stime for u in (usage, workers))
    result["worker_peak_rss_mib"] = workers.ru_maxrss / 1024
    sampler.done.set()
    result["tree_peak_rss_mib"] = max(sampler.peak, result["peak_rss_mib"])
    digest = result.pop("digest", None)
    if digest is not None:
        result["digest"] = digest()
    print(json.dumps(result))


def measure(mode: str, data: Path, out: Path, merge: bool) -> dict[str, float]:
    shutil.rmtree(out, ignore_errors=True)
    out.mkdir(parents=True)
    command = [sys.executable, __file__, "--child", mode, str(data), str(out)]
    command += ["--merge"] if merge else []
    done = subprocess.run(command, capture_output=True, text=True)
    shutil.rmtree(out, ignore_errors=True)
    if done.returncode:
        raise SystemExit(f"{mode} on {data.name} failed:\n{done.stderr[-3000:]}")
    return json.loads(done.stdout.splitlines()[-1])


def worker_mib(got: dict[str, Any]) -> str:
    """The largest worker's peak RSS times the number of workers (rdf-file's parse of a
    line-based dump), added to the process's own for the total; "" without workers."""
    if got.get("worker_peak_rss_mib", 0) < 1:
        return ""
    from graphmill.connectors.rdf._lines import WORKERS

    return f"{WORKERS * got['worker_peak_rss_mib']:,.0f} MiB"


def dump(workdir: Path, triples: int) -> Path:
    path = workdir / f"people-{triples}.nt"
    if not path.exists():
        started = time.perf_counter()
        generate(path, max(1, triples // TRIPLES_PER_PERSON))
        print(f"generated {path.name} ({path.stat().st_size / 2**20:,.0f} MiB) "
              f"in {time.perf_counter() - started:.0f} s", flush=True)  # fmt: skip
    return path


def gzipped(path: Path) -> Path:
    target = path.with_name(path.name + ".gz")
    if not target.exists():
        started = time.perf_counter()
        with open(target.with_suffix(".writing"), "wb") as fh:
            subprocess.run(["gzip", "-1", "-c", str(path)], stdout=fh, check=True)
        target.with_suffix(".writing").replace(target)
        print(f"gzipped {target.name} in {time.perf_counter() - started:.0f} s", flush=True)
    return target


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[5_000_000, 50_000_000])
    parser.add_argument("--kinds", nargs="+", default=["rdf-file", "rdf-store"])
    parser.add_argument("--workdir", type=Path, default=Path("/tmp/graphmill-bench-rdf"))
    parser.add_argument("--no-gzip", action="store_true", help="skip the gzip copy")
    parser.add_argument("--merge", action="store_true", help="time the whole pull")
    parser.add_argument("--child", nargs=3, metavar=("MODE", "DATA", "OUT"), help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        mode, data, out = args.child
        child(mode, Path(data), Path(out), args.merge)
        return
    args.workdir.mkdir(parents=True, exist_ok=True)
    sizes = sorted(args.sizes)
    runs = [(dump(args.workdir, n), n) for n in sizes]
    if not args.no_gzip:
        runs.append((gzipped(runs[-1][0]), sizes[-1]))
    seconds: dict[tuple[str, int], float] = {}
    print(
        f"{'input':24} {'mode':9} {'seconds':>8} {'(open)':>7} {'triples/s':>11} {'x bare':>7} "
        f"{'CPU s':>7} {'x bare':>7} {'peak RSS':>10} {'+workers':>9} {'together':>9} "
        f"{'load':>5}  digest"
    )
    for data, triples in runs:
        bare = measure("bare", data, args.workdir / "out", False)
        for mode in ["bare", *args.kinds]:
            if mode == "rdf-store" and data.suffix == ".gz":
                continue
            got = bare if mode == "bare" else measure(mode, data, args.workdir / "out", args.merge)
            seconds[(mode + data.suffix, triples)] = got["seconds"]
            opened = f"{got['open_seconds']:7.1f}" if "open_seconds" in got else " " * 7
            print(
                f"{data.name:24} {mode:9} {got['seconds']:8.1f} {opened} "
                f"{triples / got['seconds']:11,.0f} {bare['seconds'] / got['seconds']:7.2f} "
                f"{got['cpu_seconds']:7.1f} {bare['cpu_seconds'] / got['cpu_seconds']:7.2f} "
                f"{got['peak_rss_mib']:7,.0f} MiB {worker_mib(got):>9} "
                f"{got['tree_peak_rss_mib']:5,.0f} MiB {got['load']:5.1f}  "
                f"{got.get('digest', '')}",
                flush=True,
            )
    if len(sizes) > 1:
        small, large = sizes[0], sizes[-1]
        for key in sorted({k for k, _ in seconds}):
            if (key, small) in seconds and (key, large) in seconds:
                ratio = seconds[(key, large)] / seconds[(key, small)]
                print(f"time({large:,})/time({small:,}) for {key}: {ratio:.1f} "
                      f"(size ratio {large / small:.0f})")  # fmt: skip


if __name__ == "__main__":
    main()
