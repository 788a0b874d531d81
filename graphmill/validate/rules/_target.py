"""Label rules as pure functions over the label column of the label's vertex type."""

from __future__ import annotations

import pyarrow as pa
import pyarrow.compute as pc

from graphmill.validate.rules._properties import Column, element_values, null_mask

unlabeled_mask = null_mask  # a vertex without a label: a null (or, if multi, empty) value


def class_sizes(labels: Column) -> pa.Table:
    """Members per label class: columns ``class`` and ``members``; nulls are no class.

    A multi-valued label puts its vertex into each of its classes.
    """
    values, _ = element_values(labels)
    present = values.filter(pc.is_valid(values))
    counted = pa.table({"class": present}).group_by("class", use_threads=False)
    sizes = counted.aggregate([([], "count_all")])
    return pa.table({"class": sizes.column("class"), "members": sizes.column("count_all")})


def thin_classes(labels: Column, min_class_size: int) -> pa.Table:
    """The classes of :func:`class_sizes` with fewer than ``min_class_size`` members."""
    sizes = class_sizes(labels)
    return sizes.filter(pc.less(sizes.column("members"), min_class_size))
