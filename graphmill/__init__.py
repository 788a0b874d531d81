"""graphmill: graphs from Gremlin servers, SPARQL stores and dumps into GNN-ready bundles."""

from graphmill._version import __version__

__all__ = ["__version__"]
