"""A two-layer graph convolutional network in plain PyTorch, trained on a graphmill bundle.

The model is Kipf & Welling's (ICLR 2017, "Semi-Supervised Classification with Graph
Convolutional Networks", equation 9)::

    Z = Â · ReLU(Â · X · W0) · W1,     Â = D^-1/2 (A + I) D^-1/2

It works on a *homogeneous projection* of the bundle: the vertices of one type, their feature
matrix, and every relation whose source and target are both that type, merged into one
adjacency. What it ignores, on purpose: relations to other vertex types (in the lending demo
``member.uses.device`` and ``member.pays.merchant``), edge directions (each edge counts both
ways, as the formula assumes an undirected graph), edge multiplicities and self-loops (A is 0/1
and the ``+ I`` adds every self-loop once).

Run ``python examples/gcn.py BUNDLE VERTEX_TYPE [--epochs N] [--seed S]``.
"""

from __future__ import annotations

import argparse
from dataclasses import dataclass
from typing import Any

import torch
from torch import nn

PARTS = ("train", "validation", "test")


@dataclass
class HomogeneousGraph:
    """One vertex type's features (float [N, F]), labels (int64 [N], -1 where none), part
    masks (bool [N] each) and undirected 0/1 adjacency normalised as Â (sparse [N, N])."""

    features: torch.Tensor
    labels: torch.Tensor
    masks: dict[str, torch.Tensor]
    adjacency: torch.Tensor

    @property
    def classes(self) -> int:
        return int(self.labels.max().item()) + 1


def normalized_adjacency(endpoints: list[torch.Tensor], count: int) -> torch.Tensor:
    """Â = D^-1/2 (A + I) D^-1/2 for the union of ``endpoints`` (int64 [2, E] each), with
    A made symmetric and 0/1. Returns a sparse COO tensor [count, count]."""
    pairs = [e.to(torch.int64) for e in endpoints if e.numel()]
    loops = torch.arange(count, dtype=torch.int64)
    src = torch.cat([loops, *[p[0] for p in pairs], *[p[1] for p in pairs]])
    dst = torch.cat([loops, *[p[1] for p in pairs], *[p[0] for p in pairs]])
    codes = torch.unique(src * count + dst)  # drops repeats and existing self-loops
    row, col = codes // count, codes % count
    degree = torch.bincount(row, minlength=count).to(torch.float32)
    scale = degree.pow(-0.5)
    values = scale[row] * scale[col]
    index = torch.stack([row, col])  # unique and sorted, as a coalesced tensor needs
    return torch.sparse_coo_tensor(
        index, values, (count, count), is_coalesced=True, check_invariants=False
    )


def _mask(part: torch.Tensor, count: int) -> torch.Tensor:
    """A bool mask from a bool mask or an index tensor."""
    if part.dtype == torch.bool:
        return part
    mask = torch.zeros(count, dtype=torch.bool)
    mask[part.to(torch.int64)] = True
    return mask


def homogeneous_view(bundle: Any, vertex_type: str) -> HomogeneousGraph:
    """The projection described in the module doc, from a loaded :class:`GraphBundle`."""
    vertices = bundle.vertex_types[vertex_type]
    features = torch.nan_to_num(vertices.features.to(torch.float32))
    count = features.shape[0]
    if vertices.labels is None:
        raise ValueError(f"vertex type {vertex_type!r} has no labels in this bundle")
    labels = vertices.labels.to(torch.int64)
    masks = {name: _mask(vertices.parts[name], count) for name in PARTS if name in vertices.parts}
    endpoints = [
        relation.endpoints
        for key, relation in bundle.relations.items()
        if key.source_type == vertex_type and key.target_type == vertex_type
    ]
    return HomogeneousGraph(features, labels, masks, normalized_adjacency(endpoints, count))


def standardized(features: torch.Tensor) -> torch.Tensor:
    """Columns scaled to mean 0, standard deviation 1 over all vertices (constant columns
    become 0), so encodings of different ranges weigh alike at the start of training."""
    mean = features.mean(dim=0, keepdim=True)
    std = features.std(dim=0, keepdim=True)
    return torch.where(std > 0, (features - mean) / std.clamp_min(1e-12), 0.0)


class TwoLayerGCN(nn.Module):
    """Z = Â · ReLU(Â · X · W0) · W1, with dropout on the inputs of both layers."""

    def __init__(self, inputs: int, hidden: int, classes: int, dropout: float) -> None:
        super().__init__()
        self.first = nn.Linear(inputs, hidden)
        self.second = nn.Linear(hidden, classes)
        self.dropout = nn.Dropout(dropout)

    def forward(self, adjacency: torch.Tensor, features: torch.Tensor) -> torch.Tensor:
        hidden = torch.relu(adjacency @ self.first(self.dropout(features)))
        return adjacency @ self.second(self.dropout(hidden))


def accuracy(logits: torch.Tensor, labels: torch.Tensor, mask: torch.Tensor) -> float:
    mask = mask & (labels >= 0)
    if not mask.any():
        return float("nan")
    return (logits[mask].argmax(dim=1) == labels[mask]).float().mean().item()


def majority_accuracy(graph: HomogeneousGraph, part: str = "test") -> float:
    """Accuracy of always answering the most frequent class of the training part."""
    train = graph.labels[graph.masks["train"] & (graph.labels >= 0)]
    majority = torch.bincount(train).argmax()
    mask = graph.masks[part] & (graph.labels >= 0)
    return (graph.labels[mask] == majority).float().mean().item()


def fit_logits(
    graph: HomogeneousGraph,
    *,
    epochs: int = 200,
    seed: int = 0,
    hidden: int = 16,
    dropout: float = 0.5,
    learning_rate: float = 0.01,
    weight_decay: float = 5e-4,
    scale_features: bool = True,
) -> torch.Tensor:
    """Train with Adam on the training part's labels (Kipf & Welling's settings: 16 hidden
    units, dropout 0.5, learning rate 0.01, weight decay 5e-4) and return the logits [N, C]
    of every vertex, from the epoch with the best validation accuracy (the last epoch when
    there is no validation part)."""
    torch.manual_seed(seed)
    features = standardized(graph.features) if scale_features else graph.features
    model = TwoLayerGCN(features.shape[1], hidden, graph.classes, dropout)
    optimizer = torch.optim.Adam(model.parameters(), lr=learning_rate, weight_decay=weight_decay)
    train = graph.masks["train"] & (graph.labels >= 0)
    validation = graph.masks.get("validation")
    best, best_state = -1.0, None
    for _ in range(epochs):
        model.train()
        optimizer.zero_grad()
        logits = model(graph.adjacency, features)
        loss = nn.functional.cross_entropy(logits[train], graph.labels[train])
        loss.backward()
        optimizer.step()
        if validation is not None and validation.any():
            model.eval()
            with torch.no_grad():
                score = accuracy(model(graph.adjacency, features), graph.labels, validation)
            if score > best:
                best = score
                best_state = {k: v.clone() for k, v in model.state_dict().items()}
    if best_state is not None:
        model.load_state_dict(best_state)
    model.eval()
    with torch.no_grad():
        return model(graph.adjacency, features)


def train_graph(graph: HomogeneousGraph, **options: Any) -> dict[str, float]:
    """Accuracy per part after :func:`fit_logits` (same options), and the majority baseline
    on the test part as ``majority_test``."""
    logits = fit_logits(graph, **options)
    metrics = {part: accuracy(logits, graph.labels, mask) for part, mask in graph.masks.items()}
    if "test" in graph.masks:
        metrics["majority_test"] = majority_accuracy(graph)
    return metrics


def train(bundle: Any, vertex_type: str, epochs: int = 200, seed: int = 0) -> dict[str, float]:
    """Train the GCN on ``vertex_type`` of a loaded bundle; accuracy per part and baseline."""
    return train_graph(homogeneous_view(bundle, vertex_type), epochs=epochs, seed=seed)


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description="Train a two-layer GCN on a graphmill bundle.")
    parser.add_argument("bundle", help="bundle folder")
    parser.add_argument("vertex_type", help="the labelled vertex type")
    parser.add_argument("--epochs", type=int, default=200)
    parser.add_argument("--seed", type=int, default=0)
    args = parser.parse_args(argv)
    import graphmill

    torch.set_num_threads(1)  # small graphs: one thread is as fast and spares the machine
    metrics = train(graphmill.load_bundle(args.bundle), args.vertex_type, args.epochs, args.seed)
    for name, value in metrics.items():
        print(f"{name:>14}: {value:.3f}")


if __name__ == "__main__":
    main()
