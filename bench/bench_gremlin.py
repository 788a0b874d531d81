"""Benchmark: pulling edges out of a real TinkerPop Gremlin Server (TinkerGraph).

For each size, writes a graph of users and ``follows`` edges as a GraphSON 3 file (one
vertex a line, with its incoming edges) that the server's TinkerGraph reads when it starts
(``servers.manage.GremlinServer(data_dir=...)``: seconds, not the minutes that writing
through traversals takes), checks the loaded counts, then measures in a fresh Python process
each (so peak memory is the measurement's own):

* ``paged p1`` / ``paged p2``: the gremlin source reading the relation's work units
  (1 or 2 id-range partitions, pulled concurrently), id-ordered streams cut into pages;
* ``fingerprint``: the input fingerprint a pull records per unit before reading it (item
  count and digests of the smallest and largest id: three streaming server-side aggregates),
  so its cost can be set against ``paged p1``;
* ``streamed``: one bare traversal returning the same rows (id, out id, in id, weight)
  through gremlinpython's ``Client``, its result batches counted and dropped as they arrive;
* ``single``: the same traversal collected whole (``.all().result()``), which holds the
  whole result in client memory;
* ``pull``: ``graphmill.snapshot.pull`` of the whole spec (users and follows) into a
  snapshot, with the peak up to the end of reading and the peak of the whole pull (the
  snapshot's merge runs on the local engine, DuckDB, within its ``memory_limit``).

Figures: rows, seconds, CPU seconds of the client process, edges/s, the client's peak RSS
(``VmHWM``) and its growth above the RSS before the measured work (``VmRSS``, after
imports). Printed, never asserted.

Usage (from the repo root)::

    .venv/bin/python bench/bench_gremlin.py                  # 100k and 1M edges
    .venv/bin/python bench/bench_gremlin.py --sizes 1000000 5000000 \\
        --methods paged-p1 streamed --heap 8g                # the issue-11 scale run
"""

from __future__ import annotations

import argparse
import json
import os
import queue
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

REPO = Path(__file__).resolve().parents[1]
if str(REPO) not in sys.path:
    sys.path.insert(0, str(REPO))

LABEL_V, LABEL_E = "bench_user", "bench_follows"


def _g() -> Any:
    from gremlin_python.process.graph_traversal import GraphTraversalSource
    from gremlin_python.process.traversal import TraversalStrategies
    from gremlin_python.structure.graph import Graph

    return GraphTraversalSource(Graph(), TraversalStrategies())


def write_graph(path: Path, users: int, edges: int, seed: int) -> None:
    """A GraphSON 3 adjacency file TinkerGraph reads at start: users ``u<i>`` (``age``,
    an int) and edges ``e<i>`` between random users (``weight``, a double), each edge
    written once, among its in-vertex's ``inE`` (the reader adds edges from those)."""
    import numpy as np

    rng = np.random.default_rng(seed)
    out_v = rng.integers(users, size=edges)
    in_v = rng.integers(users, size=edges)
    weight = rng.random(edges)
    order = np.argsort(in_v, kind="stable")
    ends = np.searchsorted(in_v[order], np.arange(users + 1))
    double = '{"@type":"g:Double","@value":'
    with path.open("w", encoding="utf-8") as f:
        for v in range(users):
            mine = order[ends[v] : ends[v + 1]].tolist()
            outs = out_v[mine].tolist()
            weights = weight[mine].tolist()
            incoming = ",".join(
                f'{{"id":"e{e}","outV":"u{o}","properties":{{"weight":{double}{w!r}}}}}}}'
                for e, o, w in zip(mine, outs, weights, strict=True)
            )
            in_e = f'"inE":{{"{LABEL_E}":[{incoming}]}},' if mine else ""
            f.write(
                f'{{"id":"u{v}","label":"{LABEL_V}",{in_e}"properties":{{"age":[{{"id":'
                f'{{"@type":"g:Int64","@value":{v}}},"value":{{"@type":"g:Int32","@value":'
                f"{v % 90}}}}}]}}}}\n"
            )


def _status_mib(field: str) -> float:
    """``VmHWM`` (peak) or ``VmRSS`` of this process in MiB (``ru_maxrss`` would carry the
    parent's peak across ``exec`` on Linux)."""
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith(f"{field}:"):
            return int(line.split()[1]) / 1024
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def _cpu_s() -> float:
    usage = resource.getrusage(resource.RUSAGE_SELF)
    return usage.ru_utime + usage.ru_stime


class _Measured:
    """Wall and CPU seconds, baseline RSS and peak RSS of the work inside ``with``."""

    def __enter__(self) -> _Measured:
        self.baseline = _status_mib("VmRSS")
        self.cpu, self.started = _cpu_s(), time.perf_counter()
        return self

    def __exit__(self, *exc: object) -> None:
        self.seconds = time.perf_counter() - self.started
        self.cpu_s = _cpu_s() - self.cpu

    def figures(self, rows: int) -> dict[str, Any]:
        peak = _status_mib("VmHWM")
        return {
            "rows": rows,
            "seconds": self.seconds,
            "cpu_s": self.cpu_s,
            "peak_mib": peak,
            "growth_mib": peak - self.baseline,
        }


def _spec(url: str, partitions: int, page_size: int, out: Path | None = None) -> Any:
    from graphmill.spec import spec_from_dict

    out = out or Path(tempfile.gettempdir()) / "bench-gremlin-unused"
    return spec_from_dict(
        {
            "spec_version": 1,
            "source": {
                "kind": "gremlin",
                "url": url,
                "partitions": partitions,
                "concurrency": partitions,
                "page_size": page_size,
                "request_timeout_s": 1800,
            },
            "vertex_types": {"user": {"match": LABEL_V, "properties": {"age": {}}}},
            "relations": [
                {
                    "from": "user",
                    "name": "follows",
                    "to": "user",
                    "match": LABEL_E,
                    "properties": {"weight": {}},
                }
            ],
            "output": {"bundle": str(out / "bundle"), "snapshot": str(out / "snapshot")},
        }
    )


def measure_fingerprint(url: str) -> dict[str, Any]:
    from graphmill.connectors.gremlin import GremlinSource

    with _Measured() as m, GremlinSource(_spec(url, 1, 10_000)) as source:
        prints = [source.fingerprint(u) for u in source.plan() if u.table == "edges"]
    return m.figures(sum(p["count"] for p in prints))


def measure_paged(url: str, partitions: int, page_size: int) -> dict[str, Any]:
    from concurrent.futures import ThreadPoolExecutor

    from graphmill.connectors.gremlin import GremlinSource

    spec = _spec(url, partitions, page_size)
    with _Measured() as m, GremlinSource(spec) as source:
        units = [u for u in source.plan() if u.table == "edges"]

        def read(unit: Any) -> int:
            return sum(page.batch.num_rows for page in source.read(unit))

        with ThreadPoolExecutor(max_workers=partitions) as pool:
            rows = sum(pool.map(read, units))
    return m.figures(rows)


def measure_pull(url: str, page_size: int) -> dict[str, Any]:
    """A whole pull into a snapshot in a temporary folder; ``read_peak_mib`` is the peak
    when the source closes (reading done, before the merge)."""
    from graphmill.connectors.gremlin import GremlinSource
    from graphmill.snapshot import pull

    with tempfile.TemporaryDirectory(prefix="bench-gremlin-pull-") as out:
        spec = _spec(url, 1, page_size, Path(out))
        source = GremlinSource(spec)
        marks: dict[str, float] = {}
        close = source.close

        def close_and_mark() -> None:
            if "read_peak_mib" not in marks:
                marks["read_peak_mib"] = _status_mib("VmHWM")
                marks["read_seconds"] = time.perf_counter() - m.started
            close()

        source.close = close_and_mark  # type: ignore[method-assign]
        with _Measured() as m:
            info = pull(spec, source)
    return {**m.figures(sum(info.edge_counts.values())), **marks}


def _bare_traversal() -> Any:
    from gremlin_python.process.graph_traversal import __
    from gremlin_python.process.traversal import Column, T

    return (
        _g()
        .E()
        .has_label(LABEL_E)
        .project("i", "s", "t", "w")
        .by(T.id)
        .by(__.out_v().id_())
        .by(__.in_v().id_())
        .by(__.values("weight").fold())
        .select(Column.values)
    )


def measure_bare(url: str, *, keep: bool, batch_size: int) -> dict[str, Any]:
    """The bare traversal through gremlinpython's ``Client``: collected whole (``keep``) or
    its batches counted as they arrive (waiting on the driver's queue: ``ResultSet.one()``
    spins, which would take CPU from the thread that reads the socket)."""
    from gremlin_python.driver.client import Client

    options = {"batchSize": batch_size, "evaluationTimeout": 1_800_000}
    with _Measured() as m:
        client = Client(url, "g", pool_size=1)
        try:
            result = client.submit(_bare_traversal().bytecode, request_options=options)
            if keep:
                rows = len(result.all().result())
            else:
                rows = 0
                while True:
                    try:
                        rows += len(result.stream.get(timeout=0.05))
                    except queue.Empty:
                        if result.done.done() and result.stream.empty():
                            result.done.result()  # raises the server's error, if any
                            break
        finally:
            client.close()
    return m.figures(rows)


def _child(args: list[str]) -> dict[str, Any]:
    done = subprocess.run(
        [sys.executable, __file__, "--child", *args], capture_output=True, text=True, check=False
    )
    if done.returncode != 0:
        raise SystemExit(f"measurement {args} failed:\n{done.stdout}{done.stderr}")
    return json.loads(done.stdout.strip().splitlines()[-1])


def _run_child(mode: str, url: str, page_size: int, rest: list[str]) -> dict[str, Any]:
    if mode == "fingerprint":
        return measure_fingerprint(url)
    if mode in ("single", "streamed"):
        return measure_bare(url, keep=mode == "single", batch_size=page_size)
    if mode == "pull":
        return measure_pull(url, page_size)
    return measure_paged(url, int(rest[0]), page_size)


def _server_pid(server: Any) -> int | None:
    """The pid of the server's JVM (its command line names its run folder)."""
    for proc in Path("/proc").iterdir():
        if proc.name.isdigit():
            try:
                cmdline = (proc / "cmdline").read_bytes()
            except OSError:
                continue
            if b"java" in cmdline and str(server.run_dir).encode() in cmdline:
                return int(proc.name)
    return None


def _process_cpu_s(pid: int | None) -> float:
    """CPU seconds (user + system) a process has used so far; 0 when unknown."""
    if pid is None:
        return 0.0
    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


def loaded_counts(server: Any) -> tuple[int, int]:
    """Users and follows edges the server holds."""
    users = server.submit(f"g.V().hasLabel('{LABEL_V}').count()")[0]
    edges = server.submit(f"g.E().hasLabel('{LABEL_E}').count()")[0]
    return int(users), int(edges)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[100_000, 1_000_000])
    parser.add_argument("--users", type=int, default=50_000)
    parser.add_argument(
        "--page-size",
        type=int,
        default=10_000,
        help="graphmill's page_size, and the batchSize of the bare traversals",
    )
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument(
        "--methods",
        nargs="+",
        default=["paged-p1", "fingerprint", "paged-p2", "streamed", "single"],
        help="which measurements to run at each size (also: pull)",
    )
    parser.add_argument(
        "--heap", default="4g", help="the Gremlin Server's JVM heap (-Xmx); 5M edges want 8g"
    )
    parser.add_argument(
        "--repeat", type=int, default=1, help="rounds of all methods per size, interleaved"
    )
    parser.add_argument("--child", nargs="+", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        mode, url, page_size, *rest = args.child
        print(json.dumps(_run_child(mode, url, int(page_size), rest)))
        return
    from servers.manage import GremlinServer

    runs = {
        "paged-p1": ["paged", "1"],
        "fingerprint": ["fingerprint"],
        "paged-p2": ["paged", "2"],
        "streamed": ["streamed"],
        "single": ["single"],
        "pull": ["pull"],
    }
    unknown = sorted(set(args.methods) - set(runs))
    if unknown:
        parser.error(f"unknown methods {unknown}; choose from {sorted(runs)}")
    print(
        f"{'edges':>9} {'method':<11} {'rows':>9} {'seconds':>8} {'CPU s':>7} {'edges/s':>9}"
        f" {'peak MiB':>9} {'growth':>7} {'server CPU s':>12}  load average"
    )
    for size in sorted(args.sizes):
        data = Path(tempfile.mkdtemp(prefix="bench-gremlin-"))
        try:
            started = time.perf_counter()
            write_graph(data / "graph.json", args.users, size, args.seed)
            written = time.perf_counter() - started
            mib = (data / "graph.json").stat().st_size / 2**20
            server = GremlinServer(
                data_dir=data,
                java_options=(f"-Xmx{args.heap}",),
                evaluation_timeout_ms=1_800_000,
                startup_timeout=1800,
            )
            started = time.perf_counter()
            server.start()
            try:
                counts = loaded_counts(server)
                print(
                    f"# {size} edges: wrote {mib:.0f} MiB of GraphSON in {written:.1f} s; "
                    f"the server read it in {time.perf_counter() - started:.1f} s and holds "
                    f"{counts[0]} users, {counts[1]} edges",
                    flush=True,
                )
                if counts != (args.users, size):
                    raise SystemExit(f"loaded {counts}, expected {(args.users, size)}")
                pid = _server_pid(server)
                for name in args.methods * args.repeat:
                    mode, *rest = runs[name]
                    server_cpu = _process_cpu_s(pid)
                    out = _child([mode, server.url, str(args.page_size), *rest])
                    server_cpu = _process_cpu_s(pid) - server_cpu
                    load = " ".join(Path("/proc/loadavg").read_text().split()[:3])
                    rate = out["rows"] / out["seconds"]
                    print(
                        f"{size:>9} {name:<11} {out['rows']:>9} {out['seconds']:>8.1f} "
                        f"{out['cpu_s']:>7.1f} {rate:>9.0f} {out['peak_mib']:>9.1f} "
                        f"{out['growth_mib']:>7.1f} {server_cpu:>12.1f}  {load}",
                        flush=True,
                    )
                    if "read_peak_mib" in out:
                        print(
                            f"# pull: reading done after {out['read_seconds']:.1f} s at a "
                            f"peak of {out['read_peak_mib']:.1f} MiB",
                            flush=True,
                        )
            finally:
                # TinkerGraph writes the graph back on a clean stop: not needed here
                server.stop(timeout=5)
        finally:
            shutil.rmtree(data, ignore_errors=True)


if __name__ == "__main__":
    main()
