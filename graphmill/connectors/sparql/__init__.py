"""``sparql-endpoint``: a live SPARQL 1.1 endpoint as a graph source.

The work units, their SELECT text and the mapping of answers to pages are those of the RDF
sources (:mod:`graphmill.connectors.rdf`), so an endpoint holding the same data as a dump
gives a byte-identical snapshot. Paging strategies (``source.paging``; ``auto`` picks per
server, see ``AUTO_PAGING``):

* ``single-stream`` -- ``auto`` on Oxigraph. One unpaged SELECT per unit, cut into pages of
  ``page_size`` rows as it streams (at a change of subject); the cursor counts the staged rows
  and holds their digest. Resuming sends the SELECT again, skips the staged rows and checks
  their digest, so an answer in another order is refused rather than trusted.
* ``key-range`` -- ``auto`` on Fuseki, Virtuoso and unknown servers. Each vertex type's
  members are streamed once and sampled; a unit that fits a page is one unfiltered SELECT,
  a bigger one is read in slices ``FILTER(STR(?s) >= low && STR(?s) < high)`` of about
  ``page_size`` rows, one page per slice, blank-node subjects as a slice of their own. The
  cursor is the next slice's low bound: no result order is assumed anywhere.
* ``offset`` -- ``ORDER BY`` + ``LIMIT``/``OFFSET`` pages cut at subject boundaries.

Why (figures from ``bench/bench_sparql.py``, about 1M triples, this project's machine):
an ordered 100k-row page costs about 2 minutes on Oxigraph at any offset and about 5 s on
Fuseki; unordered pages are cheap but SPARQL promises them no stable order. On Oxigraph a
key-range slice costs a scan of all the type's members (``STR()`` is dear there: a 10k-row
slice of a 66k-member facet took 0.35 s, the whole facet 0.5 s), so many small slices grow
quadratically, while its streamed answers come in a stable index order. Fuseki's slices
are cheap.

Every strategy checks for silently truncated answers: a result whose size is a known cap or
a round number of at least 1000 is probed with ``OFFSET n LIMIT 1``; a cut key-range slice
is split, a cut offset page lowers the page size, a cut stream stops the pull with a
:class:`~graphmill.errors.MalformedResponseError`.
"""

from __future__ import annotations

from graphmill.connectors.sparql._source import AUTO_PAGING, SparqlEndpointSource

__all__ = ["AUTO_PAGING", "SparqlEndpointSource"]
