"""Benchmark: the links task's building blocks on a synthetic relation.

Measures, on ``--edges`` random edges between ``--vertices`` vertices (default 1M and 100k):

* ``edge_parts``: the keyed-hash part of every edge (BLAKE2b per edge, in Python);
* ``sample_negatives``: 5 negatives for each of 15% of the edges (the test part), rejecting
  every known edge;
* ``seen_in_training``: the leakage rule over a 70/30 split of the edges.

Usage (from the repo root)::

    .venv/bin/python bench/bench_links.py
    .venv/bin/python bench/bench_links.py --edges 10000000 --vertices 1000000

Figures are printed, never asserted.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from graphmill.transform._edge_splits import edge_parts
from graphmill.transform._leakage import seen_in_training
from graphmill.transform._negatives import negatives_generator, pair_codes, sample_negatives


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--edges", type=int, default=1_000_000)
    parser.add_argument("--vertices", type=int, default=100_000)
    args = parser.parse_args()
    n, v = args.edges, args.vertices
    rng = np.random.default_rng(0)
    src, dst = rng.integers(0, v, n), rng.integers(0, v, n)
    names = [f"v{i:08d}" for i in range(v)]
    source_ids, target_ids = [names[i] for i in src], [names[i] for i in dst]
    started = time.perf_counter()
    parts = edge_parts(
        source_ids, "knows", target_ids, undirected=True, fractions=(0.7, 0.15, 0.15), seed=1
    )
    print(f"edge_parts: {n:,} edges in {time.perf_counter() - started:.2f} s")
    test = np.flatnonzero(parts == 2)
    started = time.perf_counter()
    sample_negatives(
        src[test],
        pair_codes(src, dst, v),
        target_count=v,
        per_positive=5,
        weights=None,
        rng=negatives_generator(1, "knows", "test"),
        where="bench",
    )
    print(f"sample_negatives: 5 x {len(test):,} positives in {time.perf_counter() - started:.2f} s")
    ends = np.stack([src, dst])
    started = time.perf_counter()
    seen_in_training(
        ends, np.flatnonzero(parts > 0), np.flatnonzero(parts == 0), width=v, same_type=True
    )
    print(f"seen_in_training: {n:,} edges in {time.perf_counter() - started:.2f} s")


if __name__ == "__main__":
    main()
