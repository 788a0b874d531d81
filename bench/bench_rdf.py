"""Benchmark: pull of a synthetic N-Triples dump with ``rdf-file`` and with ``rdf-store``.

Generates about ``10 x --people`` triples (default 100k people, 1M triples): per person an
``rdf:type``, a name, an integer age, an English label, an undeclared comment (to be skipped)
and six ``knows`` edges, written with numpy and pyarrow. Each kind is then pulled in its own
process, so its peak RSS (``ru_maxrss``) is its own. Figures are printed, never asserted.

Usage (from the repo root)::

    .venv/bin/python bench/bench_rdf.py              # 1M triples
    .venv/bin/python bench/bench_rdf.py --people 20000
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

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

EX = "http://example.org/"
TYPE = "<http://www.w3.org/1999/02/22-rdf-syntax-ns#type>"
INTEGER = "<http://www.w3.org/2001/XMLSchema#integer>"
KNOWS_PER_PERSON = 6


def generate(path: Path, people: int, seed: int = 7) -> int:
    """Write the dump; return the number of triples."""
    rng = np.random.default_rng(seed)
    ids = pc.cast(pa.array(np.arange(people)), pa.string())
    subject = pc.binary_join_element_wise(f"<{EX}person/", ids, ">", "")

    def lines(predicate: str, objects: pa.Array, subjects: pa.Array = subject) -> pa.Array:
        return pc.binary_join_element_wise(subjects, f"<{EX}{predicate}>", objects, ".\n", " ")

    ages = pc.cast(pa.array(rng.integers(1, 100, people)), pa.string())
    friends = pc.cast(pa.array(rng.integers(0, people, people * KNOWS_PER_PERSON)), pa.string())
    blocks = [
        pc.binary_join_element_wise(subject, TYPE, f"<{EX}Person>", ".\n", " "),
        lines("name", pc.binary_join_element_wise('"Person number ', ids, '"', "")),
        lines("age", pc.binary_join_element_wise('"', ages, f'"^^{INTEGER}', "")),
        lines("label", pc.binary_join_element_wise('"p', ids, '"@en', "")),
        lines("comment", pc.binary_join_element_wise('"not declared ', ids, '"', "")),
        lines(
            "knows",
            pc.binary_join_element_wise(f"<{EX}person/", friends, ">", ""),
            pc.take(subject, pa.array(np.repeat(np.arange(people), KNOWS_PER_PERSON))),
        ),
    ]
    with open(path, "w", encoding="utf-8") as fh:
        for block in blocks:
            fh.write(
                pc.binary_join(pa.ListArray.from_arrays([0, len(block)], block), "")[0].as_py()
            )
    return sum(len(b) for b in blocks)


def pull_once(kind: str, data: Path, out: Path) -> dict[str, float]:
    from graphmill.connectors import open_source
    from graphmill.snapshot import pull
    from graphmill.spec import spec_from_dict

    spec = spec_from_dict(
        {
            "spec_version": 1,
            "source": {"kind": kind, "paths": [str(data)]},
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
    )
    started = time.perf_counter()
    info = pull(spec, open_source(spec))
    seconds = time.perf_counter() - started
    return {
        "seconds": seconds,
        "vertices": sum(info.vertex_counts.values()),
        "edges": sum(info.edge_counts.values()),
        "peak_rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--people", type=int, default=100_000)
    parser.add_argument("--child", nargs=3, metavar=("KIND", "DATA", "OUT"), help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        kind, data, out = args.child
        print(json.dumps(pull_once(kind, Path(data), Path(out))))
        return
    with tempfile.TemporaryDirectory(prefix="graphmill-bench-rdf-") as tmp:
        data = Path(tmp) / "people.nt"
        started = time.perf_counter()
        triples = generate(data, args.people)
        print(
            f"generated {triples:,} triples ({data.stat().st_size / 1e6:.0f} MB) "
            f"in {time.perf_counter() - started:.1f} s"
        )
        for kind in ("rdf-file", "rdf-store"):
            command = [sys.executable, __file__, "--child", kind, str(data), str(Path(tmp) / kind)]
            result = json.loads(
                subprocess.run(command, check=True, capture_output=True, text=True).stdout
            )
            rate = triples / result["seconds"]
            print(
                f"{kind:9}  {result['seconds']:6.2f} s  {rate:12,.0f} triples/s  "
                f"peak RSS {result['peak_rss_mb']:6.0f} MB  "
                f"({result['vertices']:,} vertices, {result['edges']:,} edges)"
            )


if __name__ == "__main__":
    main()
