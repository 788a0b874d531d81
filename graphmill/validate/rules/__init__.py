"""The engine-neutral cores of the validation rules: pure functions over Arrow columns.

Another engine (Spark, DuckDB) honours the same contracts by implementing these functions;
tests compare the two result for result.
"""

from graphmill.validate.rules._contract import count_in_range, missing_or_empty
from graphmill.validate.rules._pairs import (
    PairCodes,
    distinct_pairs,
    distinct_rows,
    exact_repeats,
    pair_codes,
    parallel_variants,
    reciprocated_mask,
    reciprocity_counts,
)
from graphmill.validate.rules._properties import (
    element_values,
    kind_mix,
    minority_count,
    non_finite_mask,
    null_mask,
    observed_kinds,
    out_of_range_mask,
    stored_kinds,
    top_kind,
    unexpected_kind_count,
)
from graphmill.validate.rules._structure import (
    dangling_mask,
    duplicate_counts,
    isolated_mask,
    self_loop_mask,
    shared_ids,
)
from graphmill.validate.rules._target import class_sizes, thin_classes, unlabeled_mask

__all__ = [
    "PairCodes",
    "class_sizes",
    "count_in_range",
    "dangling_mask",
    "distinct_pairs",
    "distinct_rows",
    "duplicate_counts",
    "element_values",
    "exact_repeats",
    "isolated_mask",
    "kind_mix",
    "minority_count",
    "missing_or_empty",
    "non_finite_mask",
    "null_mask",
    "observed_kinds",
    "out_of_range_mask",
    "pair_codes",
    "parallel_variants",
    "reciprocated_mask",
    "reciprocity_counts",
    "self_loop_mask",
    "shared_ids",
    "stored_kinds",
    "thin_classes",
    "top_kind",
    "unexpected_kind_count",
    "unlabeled_mask",
]
