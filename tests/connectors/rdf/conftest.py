"""Fixtures of the RDF source tests."""

from __future__ import annotations

import pytest
from rdfsource_helpers import KINDS


@pytest.fixture(params=KINDS)
def kind(request: pytest.FixtureRequest) -> str:
    """Each RDF source kind in turn."""
    return request.param
