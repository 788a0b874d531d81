"""The local engine: the plan on an embedded DuckDB (multi-threaded, out of core)."""

from graphmill.engine.local._engine import LocalEngine

__all__ = ["LocalEngine"]
