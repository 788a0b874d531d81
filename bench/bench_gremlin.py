"""Benchmark: pulling edges out of a real TinkerPop Gremlin Server (TinkerGraph).

Starts one Gremlin Server (servers/manage.py), writes a graph of users and ``follows``
edges into it through bytecode (``inject(maps).unfold().mergeV()/mergeE()``), then, for each
size, measures in a fresh Python process each (so peak memory is the measurement's own):

* ``paged p1`` / ``paged p2``: the gremlin source reading the relation's work units
  (1 or 2 id-range partitions, pulled concurrently), id-ordered streams cut into pages;
* ``fingerprint``: the input fingerprint a pull records per unit before reading it (item
  count and digests of the smallest and largest id: three streaming server-side aggregates),
  so its cost can be set against ``paged p1``;
* ``single``: one unpaged traversal returning the same rows (id, out id, in id, weight)
  in a single request through gremlinpython's ``Client`` (``.all().result()``), which
  holds the whole result in client memory.

Figures: rows, seconds, edges/s, and the client's peak RSS above its RSS before the
measured work (``getrusage`` maximum minus the baseline). Printed, never asserted.

Usage (from the repo root)::

    .venv/bin/python bench/bench_gremlin.py                  # 100k and 1M edges
    .venv/bin/python bench/bench_gremlin.py --sizes 100000   # just 100k
"""

from __future__ import annotations

import argparse
import json
import random
import resource
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


def load(url: str, users: int, first_edge: int, last_edge: int, seed: int) -> float:
    """Write users (once, when ``first_edge`` is 0) and edges [first_edge, last_edge)."""
    from gremlin_python.driver.client import Client
    from gremlin_python.process.traversal import Direction, T

    rng = random.Random(seed + first_edge)
    client = Client(url, "g")
    started = time.perf_counter()
    try:
        if first_edge == 0:
            for s in range(0, users, 5000):
                rows = [
                    {T.id: f"u{i}", T.label: LABEL_V, "age": i % 90}
                    for i in range(s, min(users, s + 5000))
                ]
                client.submit(_g().inject(rows).unfold().merge_v().count().bytecode).all().result()
        for s in range(first_edge, last_edge, 10_000):
            rows = [
                {
                    T.id: f"e{i}",
                    T.label: LABEL_E,
                    Direction.OUT: f"u{rng.randrange(users)}",
                    Direction.IN: f"u{rng.randrange(users)}",
                    "weight": rng.random(),
                }
                for i in range(s, min(last_edge, s + 10_000))
            ]
            client.submit(_g().inject(rows).unfold().merge_e().count().bytecode).all().result()
    finally:
        client.close()
    return time.perf_counter() - started


def _peak_mib() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def _spec(url: str, partitions: int, page_size: int) -> Any:
    from graphmill.spec import spec_from_dict

    return spec_from_dict(
        {
            "spec_version": 1,
            "source": {
                "kind": "gremlin",
                "url": url,
                "partitions": partitions,
                "concurrency": partitions,
                "page_size": page_size,
                "request_timeout_s": 600,
            },
            "vertex_types": {"user": {"match": LABEL_V}},
            "relations": [
                {
                    "from": "user",
                    "name": "follows",
                    "to": "user",
                    "match": LABEL_E,
                    "properties": {"weight": {}},
                }
            ],
            "output": {"bundle": str(Path(tempfile.gettempdir()) / "bench-gremlin-unused")},
        }
    )


def measure_fingerprint(url: str) -> dict[str, Any]:
    from graphmill.connectors.gremlin import GremlinSource

    baseline = _peak_mib()
    started = time.perf_counter()
    with GremlinSource(_spec(url, 1, 10_000)) as source:
        prints = [source.fingerprint(u) for u in source.plan() if u.table == "edges"]
    return {
        "rows": sum(p["count"] for p in prints),
        "seconds": time.perf_counter() - started,
        "peak_mib": _peak_mib() - baseline,
    }


def measure_paged(url: str, partitions: int, page_size: int) -> dict[str, Any]:
    from concurrent.futures import ThreadPoolExecutor

    from graphmill.connectors.gremlin import GremlinSource

    spec = _spec(url, partitions, page_size)
    baseline = _peak_mib()
    started = time.perf_counter()
    with GremlinSource(spec) as source:
        units = [u for u in source.plan() if u.table == "edges"]

        def read(unit: Any) -> int:
            return sum(page.batch.num_rows for page in source.read(unit))

        with ThreadPoolExecutor(max_workers=partitions) as pool:
            rows = sum(pool.map(read, units))
    return {
        "rows": rows,
        "seconds": time.perf_counter() - started,
        "peak_mib": _peak_mib() - baseline,
    }


def measure_single(url: str) -> dict[str, Any]:
    from gremlin_python.driver.client import Client
    from gremlin_python.process.graph_traversal import __
    from gremlin_python.process.traversal import Column, T

    traversal = (
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
    baseline = _peak_mib()
    started = time.perf_counter()
    client = Client(url, "g", pool_size=1)
    try:
        options = {"batchSize": 1000, "evaluationTimeout": 600_000}
        result = client.submit(traversal.bytecode, request_options=options).all().result()
        rows = len(result)
    finally:
        client.close()
    return {
        "rows": rows,
        "seconds": time.perf_counter() - started,
        "peak_mib": _peak_mib() - baseline,
    }


def _child(args: list[str]) -> dict[str, Any]:
    done = subprocess.run(
        [sys.executable, __file__, "--child", *args], capture_output=True, text=True, check=False
    )
    if done.returncode != 0:
        raise SystemExit(f"measurement {args} failed:\n{done.stdout}{done.stderr}")
    return json.loads(done.stdout.strip().splitlines()[-1])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[100_000, 1_000_000])
    parser.add_argument("--users", type=int, default=50_000)
    parser.add_argument("--page-size", type=int, default=10_000)
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument(
        "--methods",
        nargs="+",
        default=["paged-p1", "fingerprint", "paged-p2", "single"],
        help="which measurements to run at each size",
    )
    parser.add_argument(
        "--heap", default="4g", help="the Gremlin Server's JVM heap (-Xmx); 5M edges want 8g"
    )
    parser.add_argument("--child", nargs="+", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        mode, url, *rest = args.child
        if mode == "fingerprint":
            out = measure_fingerprint(url)
        else:
            out = measure_single(url) if mode == "single" else measure_paged(url, *map(int, rest))
        print(json.dumps(out))
        return
    from servers.manage import GremlinServer

    print(f"{'edges':>9} {'method':<10} {'rows':>9} {'seconds':>8} {'edges/s':>9} {'peak MiB':>9}")
    server_java = (f"-Xmx{args.heap}",)
    with GremlinServer(java_options=server_java, evaluation_timeout_ms=600_000) as server:
        loaded = 0
        for size in sorted(args.sizes):
            seconds = load(server.url, args.users, loaded, size, args.seed)
            print(f"# loaded edges {loaded}..{size} in {seconds:.1f} s", flush=True)
            loaded = size
            runs = [
                ("paged p1", ["paged", server.url, "1", str(args.page_size)]),
                ("fingerprint", ["fingerprint", server.url]),
                ("paged p2", ["paged", server.url, "2", str(args.page_size)]),
                ("single", ["single", server.url]),
            ]
            wanted = {m.replace("-", " ") for m in args.methods}
            for name, child_args in [(n, a) for n, a in runs if n in wanted]:
                out = _child(child_args)
                rate = out["rows"] / out["seconds"]
                print(
                    f"{size:>9} {name:<10} {out['rows']:>9} {out['seconds']:>8.1f} "
                    f"{rate:>9.0f} {out['peak_mib']:>9.1f}",
                    flush=True,
                )


if __name__ == "__main__":
    main()
