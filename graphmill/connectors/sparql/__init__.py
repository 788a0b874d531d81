"""``sparql-endpoint``: a live SPARQL 1.1 endpoint as a graph source.

Paging strategies (``source.paging``):

* ``key-range`` -- what ``auto`` picks on every server (see ``AUTO_PAGING``). Each vertex
  type's members are streamed once and sampled; a unit small enough for one page is one
  unfiltered SELECT, a bigger one is read as slices ``FILTER(STR(?s) >= low && STR(?s) <
  high)`` of about ``page_size`` rows, one page per slice, blank-node subjects as a slice of
  their own. The cursor is the next slice's low bound, so a resumed pull re-reads nothing and
  needs no stable result order. No ORDER BY: on Oxigraph an ordered page of 100k rows at 1M
  triples took about 80 s at any offset (measured, ``bench/bench_sparql.py --paging-study``).
* ``single-stream`` -- one unpaged SELECT per unit, streamed; one page per unit, so a unit
  that breaks off is read again from its start.
* ``offset`` -- ``ORDER BY`` + ``LIMIT``/``OFFSET`` pages cut at vertex boundaries; for
  servers that cannot stream large results. Fine on Fuseki (about 2 s a page at 1M triples,
  flat), very slow on Oxigraph.

Every strategy checks for silently truncated answers: a result whose size is a known cap or a
round number of at least 1000 is probed with ``OFFSET n LIMIT 1``; a cut key-range slice is
split, a cut offset page lowers the page size, otherwise the pull stops with a
:class:`~graphmill.errors.MalformedResponseError`.
"""

from __future__ import annotations

from graphmill.connectors.sparql._source import AUTO_PAGING, SparqlEndpointSource

__all__ = ["AUTO_PAGING", "SparqlEndpointSource"]
