"""The per-server adjustments of :mod:`graphmill.connectors.sparql._quirks` on their own:
the float-text projection parses as SPARQL and names the right variables; the client puts the
text back only for xsd:double and xsd:float; an unfit TSV is swapped or refused."""

from __future__ import annotations

import json

import pyarrow as pa
import pytest
from rdflib.plugins.sparql import prepareQuery
from sparql_helpers import EX, small_spec_doc

from graphmill.connectors.base import WorkUnit
from graphmill.connectors.rdf._queries import KeyRange, unit_query
from graphmill.connectors.rdf._terms import read_json_results
from graphmill.connectors.sparql._http import restore_lexical
from graphmill.connectors.sparql._quirks import fit_results_format, with_float_text
from graphmill.connectors.sparql._settings import EndpointSettings
from graphmill.errors import SpecError
from graphmill.spec import spec_from_dict

XSD = "http://www.w3.org/2001/XMLSchema#"


def test_the_float_text_projection_is_valid_sparql(tmp_path):
    spec = spec_from_dict(
        small_spec_doc({"kind": "sparql-endpoint", "query_url": "http://h/q"}, tmp_path)
    )
    facet = WorkUnit("vertices", "thing", facet="size")
    plain = unit_query(spec, facet, key_range=KeyRange(low="a", high="b"), ordered=True, limit=5)
    query = with_float_text(plain, "virtuoso", facet)
    # rdflib's SPARQL 1.1 parser as the outside check of the grammar
    assert [str(v) for v in prepareQuery(query).algebra["PV"]] == [
        "vertex",
        "value",
        "value_lexical",
    ]
    assert with_float_text(plain, "oxigraph", facet) == plain
    members = unit_query(spec, WorkUnit("vertices", "thing"))
    assert with_float_text(members, "virtuoso", WorkUnit("vertices", "thing")) == members


def test_the_text_replaces_only_floating_point_values():
    # a Virtuoso answer as it came back (measured): 6 digits in the value, all in STR()
    document = {
        "head": {"link": [], "vars": ["vertex", "value", "value_lexical"]},
        "results": {
            "distinct": False,
            "ordered": True,
            "bindings": [
                {
                    "vertex": {"type": "uri", "value": f"{EX}a"},
                    "value": {
                        "type": "typed-literal",
                        "datatype": XSD + "double",
                        "value": "379.073",
                    },
                    "value_lexical": {"type": "literal", "value": "379.0732"},
                },
                {
                    "vertex": {"type": "uri", "value": f"{EX}b"},
                    "value": {
                        "type": "typed-literal",
                        "datatype": XSD + "float",
                        "value": "0.333333",
                    },
                    "value_lexical": {"type": "literal", "value": "0.3333333"},
                },
                {
                    "vertex": {"type": "uri", "value": f"{EX}c"},
                    "value": {"type": "typed-literal", "datatype": XSD + "boolean", "value": "1"},
                    "value_lexical": {"type": "literal", "value": "true"},
                },
                {
                    "vertex": {"type": "uri", "value": f"{EX}d"},
                    "value": {"type": "literal", "xml:lang": "en-gb", "value": "colour"},
                    "value_lexical": {"type": "literal", "value": "colour"},
                },
            ],
        },
    }
    terms = restore_lexical(read_json_results(json.dumps(document)))
    assert terms.column("value").to_pylist() == ["379.0732", "0.3333333", "1", "colour"]
    assert not [n for n in terms.column_names if n.startswith("value_lexical")]
    assert terms.column("value_datatype").to_pylist()[:3] == [
        XSD + "double",
        XSD + "float",
        XSD + "boolean",
    ]
    untouched = pa.table({"vertex": ["x"], "vertex_kind": ["iri"]})
    assert restore_lexical(untouched) == untouched


def test_an_unfit_tsv_becomes_json_or_is_refused():
    settings = EndpointSettings(query_url="http://h/q")  # results_format tsv: what auto gives
    assert fit_results_format(settings, "virtuoso", "auto").results_format == "json"
    assert fit_results_format(settings, "fuseki", "auto") is settings
    with pytest.raises(SpecError) as failure:
        fit_results_format(settings, "virtuoso", "tsv")
    assert failure.value.exit_code == 2 and "source.results_format" in failure.value.one_line()
