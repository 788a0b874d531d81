"""Transform a snapshot into a bundle: vertex indices, edge policies, encoders and parts.

Every step is a pure function over Arrow columns or numpy arrays (``_indexing``, ``_edges``,
``_labels``, ``_splits``, ``_encoders``, ``_categorical``, ``_pseudonyms``); ``_build`` runs
them in order and ``_writer`` writes the result. The bundle layout is documented in
:mod:`graphmill.bundle`.
"""

from graphmill.transform._build import BuildInfo, build_bundle

__all__ = ["BuildInfo", "build_bundle"]
