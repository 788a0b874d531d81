"""``sparql-endpoint``: a live SPARQL 1.1 endpoint as a graph source.

The work units, their SELECT text and the mapping of answers to pages are those of the RDF
sources (:mod:`graphmill.connectors.rdf`), so an endpoint holding the same data as a dump
gives a byte-identical snapshot. Paging strategies (``source.paging``; ``auto`` picks per
server, see ``AUTO_PAGING``):

* ``single-stream`` -- ``auto`` on Oxigraph and Fuseki, which both stream their answers.
  One unpaged SELECT per unit, cut into pages of ``page_size`` rows as it streams (at a
  change of subject); the cursor counts the staged rows and holds their digest. Resuming
  sends the SELECT again, skips the staged rows and checks their digest, so an answer in
  another order is refused (exit 3, "use key-range") rather than trusted.
* ``key-range`` -- ``auto`` on Virtuoso and unknown servers. Each vertex type's members are
  streamed once and sampled; a unit that fits a page is one unfiltered SELECT, a bigger one
  is read in slices ``FILTER(STR(?s) >= low && STR(?s) < high)`` of about ``page_size``
  rows, one page per slice, blank-node subjects as a slice of their own. The cursor is the
  next slice's low bound: no result order is assumed anywhere, and a slice cut short by a
  server's result cap is split.
* ``offset`` -- ``ORDER BY`` + ``LIMIT``/``OFFSET`` pages cut at subject boundaries.

Why (``bench/bench_sparql.py``, about 1M triples, on this project's 2-core machine): an
ordered 100k-row page cost 79-122 s on Oxigraph at any offset, 2.5-5 s on Fuseki; unordered
pages are cheap (under 1 s) but SPARQL promises them no stable order. On Oxigraph a key-range
slice costs a scan of all the type's members (``STR()`` is dear there: a 10k-row slice of a
66k-member facet took 0.35 s, the whole facet 0.5 s), so with 10k-row slices the time grew
28x from 100k to 1M triples; single-stream grew 10x (Oxigraph) and 4.7x (Fuseki), at 0.8-0.9x
the speed of one bare streamed ``SELECT ?s ?p ?o``, and the client's Arrow memory stayed
within the parse piece (2 MiB of text) and one page (about 25 MiB with 10k-row pages).

Client memory does not grow with the answer: every answer (a stream, a slice, a page) is
mapped in slices of at most ``MAP_ROWS`` term rows cut at a change of subject, and only the
mapped rows wait until a page is staged (:mod:`._building`).

Every strategy checks for silently truncated answers: a result whose size is a known cap,
the cap the server announced (Virtuoso's ``X-SPARQL-MaxRows``) or a round number of at least
1000 is probed with ``OFFSET n LIMIT 1``; a cut key-range slice is split (its members sampled
again when the key sample itself came from a cut answer), a cut offset page lowers the page
size, a cut stream -- or a server refusing sorted pages past its window (Virtuoso's SR353) --
stops the pull with a :class:`~graphmill.errors.MalformedResponseError` (exit 7). Tested
against Virtuoso 7.2 with its default cap of 10,000 rows; its other quirks (TSV that is not
SPARQL TSV, doubles printed with 6 digits) are handled in :mod:`._quirks`.
"""

from __future__ import annotations

from graphmill.connectors.sparql._source import AUTO_PAGING, SparqlEndpointSource

__all__ = ["AUTO_PAGING", "SparqlEndpointSource"]
