"""Live Gremlin source (kind ``gremlin``): TinkerPop servers over WebSocket, via gremlinpython.

See :mod:`graphmill.connectors.gremlin._source` for paging, partitions and resume, and
:mod:`graphmill.connectors.gremlin._values` for how Gremlin values become Arrow columns.
With ``meta_properties: keep``, a declared vertex property named ``<p>__meta`` (where ``<p>``
is another declared property) holds the meta-properties of ``<p>``'s values as JSON text.
"""

from __future__ import annotations

from graphmill.connectors.gremlin._settings import GremlinSettings
from graphmill.connectors.gremlin._source import GremlinSource

__all__ = ["GremlinSettings", "GremlinSource"]
