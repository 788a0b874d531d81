"""Stable parts on many vertices: hashing original IDs and cutting the strata.

Prints the seconds for :func:`stable_unit_interval` (one keyed BLAKE2b per ID) and for
:func:`split_vertices` (numpy) on N string IDs with a 3-class label, and how many vertices
move when 5% are removed and 5% added. Run ``python bench/bench_stable_parts.py [--vertices N]``.
"""

from __future__ import annotations

import argparse
import time

import numpy as np
import pyarrow as pa

from graphmill.transform._splits import split_vertices, stable_unit_interval


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--vertices", type=int, default=1_000_000)
    args = parser.parse_args()
    n = args.vertices
    rng = np.random.default_rng(0)
    ids = pa.array([f"account-{i:09d}" for i in range(n)])
    labels = rng.integers(0, 3, n)
    started = time.perf_counter()
    units = stable_unit_interval(ids, 7)
    hashed = time.perf_counter() - started
    started = time.perf_counter()
    fractions = (0.7, 0.15, 0.15)
    before = split_vertices(
        labels, units, method="stratified", fractions=fractions, only_labeled=True
    )
    cut = time.perf_counter() - started
    keep = rng.random(n) >= 0.05
    extra = n // 20
    new_ids = pa.array([f"account-new-{i:09d}" for i in range(extra)])
    units2 = np.concatenate([units[keep], stable_unit_interval(new_ids, 7)])
    labels2 = np.concatenate([labels[keep], rng.integers(0, 3, extra)])
    after = split_vertices(
        labels2, units2, method="stratified", fractions=fractions, only_labeled=True
    )
    moved = int((before[keep] != after[: int(keep.sum())]).sum())
    print(f"vertices: {n:,}")
    print(f"hash (stable_unit_interval): {hashed:.2f} s ({n / hashed / 1e6:.2f} M IDs/s)")
    print(f"cut (split_vertices, stratified): {cut:.2f} s")
    print(f"kept vertices that moved after -5% / +5%: {moved:,}")


if __name__ == "__main__":
    main()
