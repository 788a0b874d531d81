"""Comparing two versions of a dataset: what was added, removed, changed and how far the
values drifted, with an optional gate (``drift_gate`` in the spec).

>>> import graphmill                                              # doctest: +SKIP
>>> result = graphmill.compare_bundles("week1/bundle", "week2/bundle")  # doctest: +SKIP
>>> result.document["vertex_types"]["member"]["added"], result.passed  # doctest: +SKIP
"""

from graphmill.compare._compare import compare_bundles, compare_sides, open_side
from graphmill.compare._lineage import verify_lineage
from graphmill.compare._result import Comparison

__all__ = ["Comparison", "compare_bundles", "compare_sides", "open_side", "verify_lineage"]
