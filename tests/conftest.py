"""Shared fixtures. Server fixtures come from ``servers/pytest_fixtures.py``: they start real
Gremlin Server / Fuseki / Oxigraph processes on 127.0.0.1 and stop them afterwards."""

from __future__ import annotations

import contextlib
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
if str(REPO) not in sys.path:
    sys.path.insert(0, str(REPO))

with contextlib.suppress(ImportError):  # absent only in a partial checkout
    from servers.pytest_fixtures import *  # noqa: F403  (fixtures by name)


@pytest.fixture
def write(tmp_path: Path):
    """Write a text file under tmp_path and return its path."""

    def _write(name: str, text: str) -> Path:
        path = tmp_path / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding="utf-8")
        return path

    return _write
