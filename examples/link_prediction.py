"""Link prediction in plain PyTorch on a graphmill bundle with a links task, against common
neighbours.

The bundle splits the edges of one relation within one vertex type (in the demo
``member.sends_money.member``) into parts, splits train into message and supervision edges,
and ships negatives per positive. The model is a graph autoencoder: the two-layer GCN of
:mod:`gcn` over the *message* edges only (the one graph a model may see) encodes every
vertex, and a pair scores the dot product of its two encodings. It is trained with binary
cross-entropy on the supervision edges against the bundle's train negatives.

Both it and the baseline rank each test positive among its own ``k`` negatives (same source,
another target; never an edge of any part). The figures: the mean reciprocal rank (MRR) and
Hits@10, with ties counted at their average rank (a positive tied with ``t`` negatives and
below ``g`` of them ranks ``1 + g + t/2``), so a constant score earns the rank of chance.

The baseline, common neighbours, counts the vertices adjacent to both ends in the message
edges, taken as undirected (each pair once, self-loops ignored).

Run ``python examples/link_prediction.py BUNDLE RELATION [--epochs N] [--seed S]``.
"""

from __future__ import annotations

import argparse
from typing import Any

import numpy as np
import scipy.sparse as sp
import torch
from gcn import TwoLayerGCN, normalized_adjacency, standardized


def undirected_adjacency(endpoints: np.ndarray, count: int) -> sp.csr_matrix:
    """0/1 symmetric adjacency [count, count] of ``endpoints`` (int [2, E]), no self-loops."""
    s, t = endpoints[0], endpoints[1]
    keep = s != t
    rows, cols = np.concatenate([s[keep], t[keep]]), np.concatenate([t[keep], s[keep]])
    matrix = sp.csr_matrix((np.ones(len(rows)), (rows, cols)), shape=(count, count))
    matrix.data[:] = 1.0  # repeated pairs count once
    return matrix


def common_neighbours(adjacency: sp.csr_matrix, pairs: np.ndarray) -> np.ndarray:
    """|N(u) ∩ N(v)| for each column (u, v) of ``pairs`` (int [2, P])."""
    left, right = adjacency[pairs[0]], adjacency[pairs[1]]
    return np.asarray(left.multiply(right).sum(axis=1)).ravel()


def ranks(positive: np.ndarray, negative: np.ndarray) -> np.ndarray:
    """The average rank of each positive score [n] among itself and its row of negative
    scores [n, k]: ``1 + (greater) + (equal) / 2``."""
    above = (negative > positive[:, None]).sum(axis=1)
    tied = (negative == positive[:, None]).sum(axis=1)
    return 1.0 + above + tied / 2.0


def ranking_metrics(positive: np.ndarray, negative: np.ndarray) -> dict[str, float]:
    """MRR and Hits@10 of positives [n] against their negatives [n, k]."""
    r = ranks(positive, negative)
    return {"mrr": float((1.0 / r).mean()), "hits@10": float((r <= 10).mean())}


def _pairs(relation: Any, part: str) -> tuple[np.ndarray, np.ndarray, int]:
    """(positive pairs [2, n], negative pairs [2, n*k], k) of one part."""
    ends = relation.endpoints.numpy()
    positive = ends[:, relation.parts[part].numpy()]
    negative = relation.negatives[part].numpy()
    return positive, negative, negative.shape[1] // max(positive.shape[1], 1)


def train(
    bundle: Any, dotted: str, *, epochs: int = 100, seed: int = 0, part: str = "test"
) -> dict[str, float]:
    """Train the autoencoder on ``dotted`` of a loaded bundle; its MRR / Hits@10 on ``part``
    beside the common-neighbours baseline's."""
    torch.manual_seed(seed)
    relation = next(r for k, r in bundle.relations.items() if k.dotted == dotted)
    vertex_type = relation.key.source_type
    features = standardized(torch.nan_to_num(bundle.vertex_types[vertex_type].features.float()))
    count = features.shape[0]
    supervised = "supervision" if "supervision" in relation.parts else "train"
    passing = "message" if "message" in relation.parts else "train"
    message = relation.endpoints[:, relation.parts[passing]]
    adjacency = normalized_adjacency([message], count)
    model = TwoLayerGCN(features.shape[1], 64, 32, dropout=0.0)
    optimizer = torch.optim.Adam(model.parameters(), lr=0.01)
    train_pos, train_neg, _ = _pairs(relation, "train")
    if supervised == "supervision":
        train_pos = relation.endpoints[:, relation.parts["supervision"]].numpy()
    pairs = torch.from_numpy(np.concatenate([train_pos, train_neg], axis=1))
    target = torch.cat([torch.ones(train_pos.shape[1]), torch.zeros(train_neg.shape[1])])
    loss_of = torch.nn.BCEWithLogitsLoss()
    for _ in range(epochs):
        model.train()
        optimizer.zero_grad()
        z = model(adjacency, features)
        loss = loss_of((z[pairs[0]] * z[pairs[1]]).sum(dim=1), target)
        loss.backward()
        optimizer.step()
    model.eval()
    positive, negative, k = _pairs(relation, part)
    with torch.no_grad():
        z = model(adjacency, features)

        def score(p: np.ndarray) -> np.ndarray:
            a, b = torch.from_numpy(p[0]), torch.from_numpy(p[1])
            return (z[a] * z[b]).sum(dim=1).numpy()

        learned = ranking_metrics(score(positive), score(negative).reshape(-1, k))
    common = undirected_adjacency(message.numpy(), count)
    baseline = ranking_metrics(
        common_neighbours(common, positive), common_neighbours(common, negative).reshape(-1, k)
    )
    return {
        "mrr": learned["mrr"],
        "hits@10": learned["hits@10"],
        "baseline_mrr": baseline["mrr"],
        "baseline_hits@10": baseline["hits@10"],
        "positives": float(positive.shape[1]),
        "negatives_per_positive": float(k),
    }


def main(argv: list[str] | None = None) -> None:
    import graphmill

    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("bundle")
    parser.add_argument("relation", help="source_type.name.target_type")
    parser.add_argument("--epochs", type=int, default=100)
    parser.add_argument("--seed", type=int, default=0)
    args = parser.parse_args(argv)
    bundle = graphmill.load_bundle(args.bundle)
    metrics = train(bundle, args.relation, epochs=args.epochs, seed=args.seed)
    for name, value in metrics.items():
        print(f"{name:<24} {value:.4f}")


if __name__ == "__main__":
    main()
