"""graphmill: graphs from Gremlin servers, SPARQL stores and dumps into GNN-ready bundles.

The public API is what ``__all__`` lists; everything else is private. Heavy parts (the
bundle loader, which needs torch) are imported when first used.
"""

from __future__ import annotations

import importlib
from typing import Any

from graphmill._version import __version__
from graphmill.connectors.base import GraphSource, Page, Provenance, SourceCapabilities, WorkUnit
from graphmill.errors import (
    AuthenticationError,
    BundleIntegrityError,
    ExitCode,
    GraphmillError,
    InputError,
    MalformedResponseError,
    MissingExtraError,
    SourceServerError,
    SourceTimeoutError,
    SourceUnavailableError,
    SpecError,
)
from graphmill.pipeline import ChecksFailedError, Pipeline, RunResult, build, check, pull, run
from graphmill.snapshot import Snapshot
from graphmill.spec import PipelineSpec, RelationKey, load_spec

_LAZY = {
    "Comparison": "graphmill.compare",
    "GraphBundle": "graphmill.bundle",
    "compare_bundles": "graphmill.compare",
    "inspect_bundle": "graphmill.bundle",
    "load_bundle": "graphmill.bundle",
    "verify_lineage": "graphmill.compare",
    "write_card": "graphmill.card",
}


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'graphmill' has no attribute {name!r}")


__all__ = [
    "AuthenticationError",
    "BundleIntegrityError",
    "ChecksFailedError",
    "Comparison",
    "ExitCode",
    "GraphBundle",
    "GraphSource",
    "GraphmillError",
    "InputError",
    "MalformedResponseError",
    "MissingExtraError",
    "Page",
    "Pipeline",
    "PipelineSpec",
    "Provenance",
    "RelationKey",
    "RunResult",
    "Snapshot",
    "SourceCapabilities",
    "SourceServerError",
    "SourceTimeoutError",
    "SourceUnavailableError",
    "SpecError",
    "WorkUnit",
    "__version__",
    "build",
    "check",
    "compare_bundles",
    "inspect_bundle",
    "load_bundle",
    "load_spec",
    "pull",
    "run",
    "verify_lineage",
    "write_card",
]
