"""Benchmark: graphmill against the notebook route, in one run.

The notebook route is what a data scientist writes by hand without graphmill: pandas reads
the files, dictionaries map string IDs to indices, networkx counts reciprocity and one-way
edges, pandas drops repeats and symmetrizes, numpy standardizes a feature and one-hot
encodes another, and ``torch.save`` writes the tensors. It does the same checks and
transforms as ``graphmill run`` on the graph of ``bench_engine.py`` (same generator, same
planted defects): dangling, self-loop, repeated and one-way edges, reciprocity, isolated
vertices; drop repeats, symmetrize the undirected relation, standardize ``score``, one-hot
``region``, a seeded split of the labelled accounts.

Each route runs in a fresh child process (peak RSS is its own). Prints seconds, peak RSS
and graphmill's speed-up over the notebook route, plus the checks' counts from both routes
side by side (they should agree; a disagreement is printed, not hidden).

Usage (from the repo root)::

    .venv/bin/python bench/bench_notebook.py                       # 1M accounts, 10M edges
    .venv/bin/python bench/bench_notebook.py --vertices 100000 --edges 1000000

Figures are printed, never asserted: this is a measurement, not a test.
"""

from __future__ import annotations

import argparse
import json
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_engine import child_engine, generate


def notebook_route(source: dict[str, Any], out: Path) -> dict[str, Any]:
    """The hand-written route; returns its seconds and the counts it found."""
    import networkx as nx
    import numpy as np
    import pandas as pd
    import torch

    started = time.perf_counter()
    out.mkdir(parents=True, exist_ok=True)
    vertices = {Path(v["path"]).stem: pd.read_parquet(v["path"]) for v in source["vertex_files"]}
    accounts, shops = vertices["accounts"], vertices["shops"]
    account_index = {vid: i for i, vid in enumerate(accounts["id"])}
    shop_index = {vid: i for i, vid in enumerate(shops["id"])}
    counts: dict[str, int] = {}
    tensors: dict[str, Any] = {}
    touched = {"account": set(), "shop": set()}
    for entry in source["edge_files"]:
        rel = entry["relation"]
        edges = pd.read_parquet(entry["path"])
        target_index = account_index if rel == "knows" else shop_index
        src = edges["src"].map(account_index)
        dst = edges["dst"].map(target_index)
        dangling = src.isna() | dst.isna()
        counts[f"{rel}.dangling"] = int(dangling.sum())
        counts[f"{rel}.self_loops"] = int((edges["src"] == edges["dst"]).sum())
        counts[f"{rel}.repeated"] = int(edges.duplicated().sum())
        mapped = pd.DataFrame({"s": src[~dangling], "t": dst[~dangling]}).astype("int64")
        mapped = mapped.drop_duplicates()
        if rel == "knows":
            graph = nx.DiGraph()
            graph.add_edges_from(zip(edges["src"], edges["dst"], strict=True))
            counts["knows.reciprocity_pairs"] = graph.number_of_edges()
            counts["knows.one_way"] = sum(
                1
                for u, v in zip(edges["src"], edges["dst"], strict=True)
                if not graph.has_edge(v, u)
            )
            counts["knows.reciprocity_x1e6"] = round(nx.overall_reciprocity(graph) * 1e6)
            both = pd.concat([mapped, mapped.rename(columns={"s": "t", "t": "s"})])
            mapped = both.drop_duplicates().sort_values(["s", "t"])
            touched["account"].update(mapped["s"].tolist())
        else:
            touched["account"].update(mapped["s"].tolist())
            touched["shop"].update(mapped["t"].tolist())
        tensors[f"edges.{rel}"] = torch.tensor(mapped.to_numpy().T.copy())
    counts["account.isolated"] = len(accounts) - len(touched["account"])
    counts["shop.isolated"] = len(shops) - len(touched["shop"])
    score = accounts["score"].to_numpy()
    tensors["account.x"] = torch.tensor(((score - score.mean()) / score.std()).reshape(-1, 1))
    tensors["shop.x"] = torch.tensor(pd.get_dummies(shops["region"]).to_numpy(dtype="float32"))
    _classes, labels = np.unique(accounts["tier"].to_numpy(), return_inverse=True)
    tensors["account.y"] = torch.tensor(labels)
    order = np.random.default_rng(1).permutation(len(accounts))
    cut = [int(len(order) * 0.8), int(len(order) * 0.9)]
    for name, part in zip(("train", "valid", "test"), np.split(order, cut), strict=True):
        tensors[f"account.{name}"] = torch.tensor(np.sort(part))
    torch.save(tensors, out / "graph.pt")
    return {"seconds": {"total": time.perf_counter() - started}, "counts": counts}


def graphmill_counts(out: Path) -> dict[str, int]:
    """The counts graphmill's check report found, under the notebook route's names."""
    report = json.loads((out / "snapshot.report.json").read_text())
    found: dict[str, int] = {}
    for finding in report.get("findings", []):
        subject = finding.get("subject", {})
        where = subject.get("relation") or subject.get("vertex_type") or "-"
        found[f"{where}.{finding['rule']}"] = int(finding.get("count", 0))
    return found


def run_child(args: list[str]) -> dict[str, Any]:
    done = subprocess.run(
        [sys.executable, __file__, *args], check=True, capture_output=True, text=True
    )
    return dict(json.loads(done.stdout.strip().splitlines()[-1]))


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--vertices", type=int, default=1_000_000, help="accounts")
    parser.add_argument("--edges", type=int, default=10_000_000)
    parser.add_argument("--engine", default="local", help="graphmill's engine kind")
    parser.add_argument("--seed", type=int, default=20261202)
    parser.add_argument("--workdir", type=Path, help="where files go (default: a temp folder)")
    parser.add_argument("--child", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    workdir = args.workdir or Path(tempfile.mkdtemp(prefix="graphmill-notebook-"))
    if args.child:
        source = json.loads((workdir / "source.json").read_text())
        if args.child == "notebook":
            result = notebook_route(source, workdir / "notebook")
        else:
            result = child_engine(source, workdir / "graphmill", {"kind": args.child})
            result["counts"] = graphmill_counts(workdir / "graphmill")
        result["peak_rss"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
        print(json.dumps(result))
        return
    try:
        source = generate(workdir / "input", args.vertices, args.edges, args.seed)
        (workdir / "source.json").write_text(json.dumps(source))
        extra = ["--workdir", str(workdir)]
        ours = run_child(["--child", args.engine, *extra])
        theirs = run_child(["--child", "notebook", *extra])
        mib = 1024 * 1024
        print(f"graph: {args.vertices:,} accounts, ~{args.edges:,} edges")
        for name, fig in (("graphmill " + args.engine, ours), ("notebook route", theirs)):
            print(f"{name:<18}{fig['seconds']['total']:9.1f} s{fig['peak_rss'] / mib:10.0f} MiB")
        speedup = theirs["seconds"]["total"] / ours["seconds"]["total"]
        print(f"graphmill is {speedup:.1f}x faster than the notebook route")
        print("notebook route counts:", json.dumps(theirs["counts"], sort_keys=True))
        print("graphmill findings:   ", json.dumps(ours["counts"], sort_keys=True))
    finally:
        shutil.rmtree(workdir, ignore_errors=True)


if __name__ == "__main__":
    main()
