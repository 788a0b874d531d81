"""Live Gremlin source (kind ``gremlin``): TinkerPop servers over WebSocket, via gremlinpython.

See :mod:`graphmill.connectors.gremlin._source` for paging, partitions and resume, and
:mod:`graphmill.connectors.gremlin._values` for how Gremlin values become Arrow columns.
"""

from __future__ import annotations

from graphmill.connectors.gremlin._settings import GremlinSettings
from graphmill.connectors.gremlin._source import META_SUFFIX, GremlinSource

__all__ = ["META_SUFFIX", "GremlinSettings", "GremlinSource"]
