"""What the SPARQL source does differently for servers whose answers stray from the standard.

Measured on Virtuoso 7.2.5 (Debian's package; see ``servers/README.md``):

* its TSV results are not SPARQL 1.1 TSV (no ``?`` in the header, IRIs written as quoted
  strings like literals), so ``results_format: auto`` asks it for JSON and an explicit
  ``tsv`` is a spec error (:func:`fit_results_format`);
* its result documents print ``xsd:double`` / ``xsd:float`` values with 6 significant
  digits, while ``STR()`` gives up to 16, so a facet's SELECT also projects the value's
  ``STR()`` and the client takes that text for those datatypes (:func:`with_float_text`,
  ``_http.restore_lexical``);
* it has no default graph of its own: a query without ``FROM`` sees every graph, so a triple
  held in two graphs comes back twice; every SELECT sent to it is DISTINCT
  (``UNION_DEFAULT_GRAPH``).

Its result cap (``X-SPARQL-MaxRows``) and its sorted-window refusal (SR353) are handled where
every server's caps are: ``_http`` and ``_failures``.
"""

from __future__ import annotations

from dataclasses import replace

from graphmill.connectors.base import WorkUnit
from graphmill.connectors.rdf._queries import VALUE, VERTEX
from graphmill.connectors.sparql._http import LEXICAL_SUFFIX
from graphmill.connectors.sparql._settings import EndpointSettings
from graphmill.errors import SpecError

#: servers whose TSV results are not SPARQL 1.1 TSV, and why
TSV_UNFIT = {
    "virtuoso": "Virtuoso's TSV results are not SPARQL 1.1 TSV (no '?' in the header, IRIs "
    "written as quoted strings like literals)",
}
#: servers that write xsd:double / xsd:float values with too few digits in their results
ROUNDS_FLOATS = frozenset({"virtuoso"})
#: servers whose default graph is the union of every graph: their SELECTs get DISTINCT
UNION_DEFAULT_GRAPH = frozenset({"virtuoso"})


def fit_results_format(settings: EndpointSettings, product: str, asked: str) -> EndpointSettings:
    """``settings`` with the results format this server can give: JSON instead of TSV where
    its TSV is unfit and the spec said ``auto`` (``asked``); SpecError where it said ``tsv``."""
    reason = TSV_UNFIT.get(product)
    if reason is None or settings.results_format != "tsv":
        return settings
    if asked == "tsv":
        raise SpecError(
            f"{reason}, so IRIs, literals and datatypes cannot be told apart",
            key_path="source.results_format",
            hint="use results_format: json, or leave it auto",
        )
    return replace(settings, results_format="json")


def with_float_text(query: str, product: str, unit: WorkUnit) -> str:
    """A facet unit's SELECT plus ``(STR(?value) AS ?value_lexical)`` on a server that rounds
    floating-point values in its results; any other query unchanged."""
    if product not in ROUNDS_FLOATS or unit.facet is None:
        return query
    head = f"?{VERTEX} ?{VALUE} WHERE {{"
    if head not in query:
        raise AssertionError(f"unexpected facet query shape: {query[:120]!r}")
    lexical = f"(STR(?{VALUE}) AS ?{VALUE}{LEXICAL_SUFFIX})"
    return query.replace(head, f"?{VERTEX} ?{VALUE} {lexical} WHERE {{", 1)
