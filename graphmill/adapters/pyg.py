"""A bundle as PyTorch Geometric graph objects (the ``pyg`` extra).

Contract: :func:`to_hetero_graph` returns a ``torch_geometric.data.HeteroData`` with, per
vertex type, ``x`` (the feature matrix; absent when the type has none), ``num_nodes``, ``y``
(label codes, -1 unlabeled) and the boolean ``train_mask`` / ``val_mask`` / ``test_mask``
(our parts train / validation / test); per relation ``(source type, relation, target
type)``, ``edge_index`` (the endpoints), ``edge_attr`` (edge features, when declared) and
``edge_weight`` (the multiplicity of merged repeats, when merged). Where the bundle holds an
edge split (``relation.<key>.part.<part>.positions``: edge positions [n] into the endpoints,
or index pairs [2, n]) and negatives (``relation.<key>.negatives.<part>``, int64 [2, n]),
:func:`link_prediction_graphs` returns one graph per part the way that library's link
prediction expects: message passing over the training edges only, and on each split
relation ``edge_label_index`` (positives, then negatives) with ``edge_label`` (1.0, 0.0).
:func:`to_graph` gives a homogeneous ``Data`` for a bundle of one vertex type and one
relation. The library's names stay in this module; the bundle keeps its own.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from graphmill.bundle import GraphBundle, load_bundle
from graphmill.errors import InputError, require

PART_MASKS = {"train": "train_mask", "validation": "val_mask", "test": "test_mask"}


def _bundle(bundle: GraphBundle | str | Path) -> GraphBundle:
    return bundle if isinstance(bundle, GraphBundle) else load_bundle(bundle)


def to_hetero_graph(bundle: GraphBundle | str | Path) -> Any:
    """The bundle as a ``HeteroData`` (see the module contract)."""
    pyg_data = require("torch_geometric.data", "pyg")
    bundle = _bundle(bundle)
    data = pyg_data.HeteroData()
    for name, vt in bundle.vertex_types.items():
        store = data[name]
        store.num_nodes = vt.count
        if vt.features is not None:
            store.x = vt.features
        if vt.labels is not None:
            store.y = vt.labels
        for part, flags in vt.part_flags.items():
            store[PART_MASKS[part]] = flags
    for key, rel in bundle.relations.items():
        store = data[key.source_type, key.name, key.target_type]
        store.edge_index = rel.endpoints
        if rel.features is not None:
            store.edge_attr = rel.features
        if rel.multiplicity is not None:
            store.edge_weight = rel.multiplicity
    return data


def link_prediction_graphs(bundle: GraphBundle | str | Path) -> dict[str, Any]:
    """Per part (train, validation, test), a ``HeteroData`` for link prediction.

    Every graph passes messages over the training edges of each split relation (all edges of
    the others); the split relations carry ``edge_label_index`` and ``edge_label``. Raises
    :class:`InputError` when the bundle holds no edge split.
    """
    require("torch_geometric.data", "pyg")
    import torch

    bundle = _bundle(bundle)
    split = [k for k, rel in bundle.relations.items() if "train" in rel.parts]
    if not split:
        raise InputError(
            "this bundle has no edge split (no relation.<key>.part.train.positions tensor)",
            hint="declare an edge split for link prediction in the spec and build again",
        )
    graphs: dict[str, Any] = {}
    for part in PART_MASKS:
        data = to_hetero_graph(bundle)
        for key in split:
            store = data[key.source_type, key.name, key.target_type]
            rel = bundle.relations[key]
            store.edge_index = _pairs(rel.parts["train"], rel.endpoints)
            positives = rel.parts.get(part)
            if positives is None:
                continue
            positives = _pairs(positives, rel.endpoints)
            negatives = rel.negatives.get(part)
            if negatives is None:
                negatives = torch.empty((2, 0), dtype=torch.int64)
            store.edge_label_index = torch.cat([positives, negatives], dim=1)
            store.edge_label = torch.cat(
                [torch.ones(positives.shape[1]), torch.zeros(negatives.shape[1])]
            )
        graphs[part] = data
    return graphs


def _pairs(positions: Any, endpoints: Any) -> Any:
    """Index pairs [2, n]: positions [n] select columns of ``endpoints``; pairs pass as is."""
    return endpoints[:, positions] if positions.dim() == 1 else positions


def to_graph(bundle: GraphBundle | str | Path) -> Any:
    """A homogeneous ``Data`` for a bundle of exactly one vertex type and one relation."""
    pyg_data = require("torch_geometric.data", "pyg")
    bundle = _bundle(bundle)
    if len(bundle.vertex_types) != 1 or len(bundle.relations) != 1:
        raise InputError(
            f"a homogeneous graph needs one vertex type and one relation; this bundle has "
            f"{len(bundle.vertex_types)} and {len(bundle.relations)}",
            hint="use to_hetero_graph for several types or relations",
        )
    hetero = to_hetero_graph(bundle)
    (name,) = bundle.vertex_types
    (key,) = bundle.relations
    values = dict(hetero[name].to_dict())
    values.update(hetero[key.source_type, key.name, key.target_type].to_dict())
    return pyg_data.Data(**values)
