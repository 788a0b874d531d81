"""Benchmark: graphmill's SPARQL endpoint pull against one unpaged streaming SELECT.

For each dataset size (the generated dataset of ``tests/connectors/sparql/sparql_dataset.py``)
and each server (Oxigraph server, Fuseki in-memory), in one run:

* ``baseline``: ``SELECT ?s ?p ?o WHERE { ?s ?p ?o }`` streamed as TSV and its rows counted
  (the least a client can do to move the same data);
* ``PAGING:N``: a ``graphmill`` pull of the whole spec with ``paging: PAGING`` and
  ``page_size: N``, snapshot written (default series: auto with the default page size, and
  single-stream and key-range with 10k-row pages).

Each measurement runs in a child process, so its peak resident memory (VmHWM) is the
client's own; for pulls it is also taken when reading ends, before the snapshot is merged.
Printed: seconds, triples/s (of the dataset's triples), peak MiB, and the 1M/100k time ratio
per series (goal: at most 12, i.e. about linear). ``--paging-study`` adds
the LIMIT/OFFSET measurements (with and without ORDER BY) at the largest size.

    .venv/bin/python bench/bench_sparql.py                       # 100k and 1M, both servers
    .venv/bin/python bench/bench_sparql.py --sizes 100000 --servers oxigraph
    .venv/bin/python bench/bench_sparql.py --paging-study --json out/bench_sparql.json
    .venv/bin/python bench/bench_sparql.py --sizes 10000000 --servers oxigraph \
        --series auto:100000 --query-url http://127.0.0.1:PORT/query   # a loaded server
"""

from __future__ import annotations

import argparse
import json
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

REPO = Path(__file__).resolve().parents[1]
sys.path[:0] = [str(REPO), str(REPO / "tests" / "connectors" / "sparql")]

TSV = "text/tab-separated-values"


def _peak_mib() -> float:
    """This process's peak resident memory (VmHWM; ru_maxrss would include the parent's
    peak from before exec on Linux)."""
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def _stream(url: str, query: str) -> int:
    import httpx

    rows = 0
    headers = {"Content-Type": "application/sparql-query", "Accept": TSV}
    with httpx.stream("POST", url, content=query.encode(), headers=headers, timeout=900) as r:
        r.raise_for_status()
        for chunk in r.iter_bytes(1 << 20):
            rows += chunk.count(b"\n")
    return rows - 1


class _ArrowPeak:
    """Samples ``pyarrow.total_allocated_bytes()`` every 20 ms: Arrow memory in use, which
    the allocator's retained pages (mimalloc) do not inflate as they do the RSS."""

    def __init__(self) -> None:
        import threading

        import pyarrow as pa

        self.peak_mib = 0.0

        def watch() -> None:
            while True:
                self.peak_mib = max(self.peak_mib, pa.total_allocated_bytes() / 2**20)
                time.sleep(0.02)

        threading.Thread(target=watch, daemon=True).start()


def child_baseline(url: str) -> dict[str, Any]:
    started = time.perf_counter()
    rows = _stream(url, "SELECT ?s ?p ?o WHERE { ?s ?p ?o }")
    return {"seconds": time.perf_counter() - started, "rows": rows, "peak_mib": _peak_mib()}


def child_pull(url: str, paging: str, page_size: int, out: str) -> dict[str, Any]:
    """One pull; ``read_peak_mib`` is the peak up to the end of reading (the source is closed
    before the snapshot is merged and published), ``peak_mib`` the peak of the whole pull."""
    from sparql_dataset import dataset_spec

    from graphmill.connectors import open_source
    from graphmill.snapshot import pull
    from graphmill.spec import spec_from_dict

    source = {"kind": "sparql-endpoint", "query_url": url, "page_size": page_size}
    source["paging"] = paging
    spec = spec_from_dict(dataset_spec(source, Path(out)))
    endpoint = open_source(spec)
    marks: dict[str, float] = {}
    close = endpoint.close
    arrow = _ArrowPeak()

    def close_and_mark() -> None:
        marks["read_peak_mib"] = _peak_mib()
        marks["read_arrow_peak_mib"] = arrow.peak_mib
        marks["read_seconds"] = time.perf_counter() - started
        close()

    endpoint.close = close_and_mark  # type: ignore[method-assign]
    started = time.perf_counter()
    info = pull(spec, endpoint)
    return {
        "seconds": time.perf_counter() - started,
        "rows": sum(info.vertex_counts.values()) + sum(info.edge_counts.values()),
        "pages": info.pages_read,
        "paging": getattr(endpoint, "paging", paging),
        "peak_mib": _peak_mib(),
        **marks,
    }


def _child(*args: str) -> dict[str, Any]:
    done = subprocess.run(
        [sys.executable, __file__, "--child", *args], capture_output=True, text=True, check=False
    )
    if done.returncode != 0:
        raise SystemExit(f"child {args} failed:\n{done.stderr[-3000:]}")
    return json.loads(done.stdout.strip().splitlines()[-1])


def paging_study(url: str, triples: int, with_order: bool) -> list[dict[str, Any]]:
    """Seconds for LIMIT 100000 pages at growing OFFSETs, unordered and ordered."""
    out = []
    offsets = [0, triples // 2, max(0, triples - 100_000)]
    for ordered in (False, True) if with_order else (False,):
        for offset in offsets if not ordered else [offsets[0], offsets[-1]]:
            order = " ORDER BY ?s ?p ?o" if ordered else ""
            query = f"SELECT ?s ?p ?o WHERE {{ ?s ?p ?o }}{order} LIMIT 100000 OFFSET {offset}"
            started = time.perf_counter()
            rows = _stream(url, query)
            seconds = time.perf_counter() - started
            out.append({"ordered": ordered, "offset": offset, "rows": rows, "seconds": seconds})
            print(
                f"    paging ordered={ordered!s:5} offset={offset:>8}: {seconds:7.2f} s", flush=True
            )
    return out


class _Running:
    """A server started elsewhere (``--query-url``)."""

    def __init__(self, query_url: str) -> None:
        self.query_url = query_url


def _servers(names: list[str], data: Path) -> Any:
    from servers.manage import N_TRIPLES, FusekiServer, OxigraphServer

    for name in names:
        started = time.perf_counter()
        if name == "oxigraph":
            # the timeout counts the bulk load too: minutes at 10M triples on a busy machine
            server: Any = OxigraphServer(preload=[data], startup_timeout=3600).start()
        else:
            server = FusekiServer(java_options=("-Xmx3g",)).start()
            server.load(data.read_bytes(), content_type=N_TRIPLES)
        print(f"  {name}: started and loaded in {time.perf_counter() - started:.1f} s", flush=True)
        try:
            yield name, server
        finally:
            server.stop()


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[100_000, 1_000_000])
    parser.add_argument("--servers", nargs="+", default=["oxigraph", "fuseki"])
    parser.add_argument(
        "--series",
        nargs="+",
        default=["auto:100000", "single-stream:10000", "key-range:10000"],
        help="PAGING:PAGE_SIZE pulls to time besides the baseline",
    )
    parser.add_argument("--paging-study", action="store_true")
    parser.add_argument("--no-order-by", action="store_true", help="skip ordered pages")
    parser.add_argument(
        "--query-url",
        help="measure against a running server already holding the dataset of the one "
        "--sizes value (written by sparql_dataset.write_ntriples), named by --servers; "
        "skips writing and loading, which take long at 10M triples",
    )
    parser.add_argument("--json", type=Path)
    parser.add_argument("--child", nargs="+", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.child:
        kind, *rest = args.child
        if kind == "baseline":
            result = child_baseline(rest[0])
        else:
            result = child_pull(rest[0], rest[1], int(rest[2]), rest[3])
        print(json.dumps(result))
        return 0

    from sparql_dataset import dataset_triples, write_ntriples

    results: list[dict[str, Any]] = []
    studies: dict[str, Any] = {}
    with tempfile.TemporaryDirectory(prefix="bench-sparql-") as scratch:
        for size in sorted(args.sizes):
            data = Path(scratch) / f"data-{size}.nt"
            if args.query_url:
                triples = dataset_triples(size)
                running = [(args.servers[0], _Running(args.query_url))]
            else:
                triples = write_ntriples(data, triples=size)
            print(f"dataset: {triples} triples", flush=True)
            for name, server in running if args.query_url else _servers(args.servers, data):
                for label in ["baseline", *args.series]:
                    if label == "baseline":
                        got = _child("baseline", server.query_url)
                    else:
                        paging, page = label.split(":")
                        out = Path(scratch) / f"out-{name}-{size}-{paging}-{page}"
                        got = _child("pull", server.query_url, paging, page, str(out))
                    got.update(
                        server=name,
                        series=label,
                        triples=triples,
                        triples_per_s=triples / got["seconds"],
                    )
                    results.append(got)
                    reading = got.get("read_peak_mib")
                    print(
                        f"  {name:8} {label:20} {got['seconds']:7.2f} s "
                        f"{got['triples_per_s']:>9,.0f} triples/s  peak {got['peak_mib']:5.0f} MiB"
                        + (
                            f" (reading {reading:4.0f} MiB, Arrow "
                            f"{got['read_arrow_peak_mib']:3.0f} MiB, as {got['paging']})"
                            if reading
                            else ""
                        ),
                        flush=True,
                    )
                if args.paging_study and size == max(args.sizes):
                    studies[name] = paging_study(server.query_url, triples, not args.no_order_by)
    _summary(results)
    if args.json:
        args.json.parent.mkdir(parents=True, exist_ok=True)
        args.json.write_text(json.dumps({"results": results, "paging": studies}, indent=2))
    return 0


def _summary(results: list[dict[str, Any]]) -> None:
    sizes = sorted({r["triples"] for r in results})
    if len(sizes) < 2:
        return
    small, large = sizes[0], sizes[-1]
    print(f"\ntime ratio {large}/{small} triples (goal <= 12), peak MiB small -> large:")
    for server in dict.fromkeys(r["server"] for r in results):
        for series in dict.fromkeys(r["series"] for r in results):
            pick = {
                r["triples"]: r for r in results if r["server"] == server and r["series"] == series
            }
            if small in pick and large in pick:
                ratio = pick[large]["seconds"] / pick[small]["seconds"]
                line = f"  {server:8} {series:20} ratio {ratio:5.2f}"
                for key in ("peak_mib", "read_peak_mib", "read_arrow_peak_mib"):
                    if key in pick[small]:
                        line += f"   {key} {pick[small][key]:4.0f} -> {pick[large][key]:4.0f}"
                print(line)


if __name__ == "__main__":
    sys.exit(main())
