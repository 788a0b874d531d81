"""The ``vertex-values`` task: a numeric label as a standardized target.

Contract: the label property's values are read as numbers (NaN where missing), the vertices
with a value are split at random (``only_labeled``) like class labels are, and the target is
standardized with the mean and standard deviation of the train part
(:func:`graphmill.transform._targets.standardize`). The bundle gets
``vertex.<type>.targets`` float32 [N] (NaN: no target) and the statistics in the manifest's
``task`` entry; ``label`` stays null, since there are no classes.
"""

from __future__ import annotations

import numpy as np

from graphmill.bundle import vertex_key
from graphmill.spec import PipelineSpec
from graphmill.transform._indexing import VertexIndex
from graphmill.transform._labels import UNLABELED
from graphmill.transform._targets import standardize, target_numbers
from graphmill.transform._vertices import add_vertex_parts
from graphmill.transform._writer import BundleContent


def add_vertex_values(
    content: BundleContent, spec: PipelineSpec, vi: VertexIndex, warnings: list[str]
) -> np.ndarray:
    """Add the targets, parts and task entry of ``vi``'s type; return the train positions."""
    assert spec.label is not None
    name, prop = vi.vertex_type, spec.label.property
    values = target_numbers(vi.table.column(prop), where="label.property", side="vertex")
    has_target = np.isfinite(values)
    if not has_target.any():
        warnings.append(f"label.property: no {name!r} vertex has a number for {prop!r}")
    strata = np.where(has_target, 0, UNLABELED).astype(np.int64)
    train = add_vertex_parts(content, spec, vi, strata, ["with a target"], warnings)
    targets, stats = standardize(values, train)
    key = content.add_tensor(
        vertex_key(name, "targets"),
        targets,
        f"{name}: {prop} standardized with the train mean and std, NaN without a target",
    )
    content.manifest["task"] = {
        "kind": "vertex-values",
        "vertex_type": name,
        "property": prop,
        "tensor": key,
        "standardized": stats,
    }
    return train
