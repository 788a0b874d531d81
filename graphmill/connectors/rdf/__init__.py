"""RDF sources: dumps (``rdf-file``) and an embedded SPARQL store (``rdf-store``).

How RDF becomes a property graph
--------------------------------
* **Vertices.** IRIs and blank nodes are vertices. ``vertex_id`` is the IRI text, or
  ``_:label`` for a blank node. Blank node labels written in a file are kept as written (so two
  files that both say ``_:b1`` mean one vertex); anonymous blank nodes (Turtle ``[]``, RDF/XML
  nodes without ``rdf:nodeID``) get labels the parser makes up, stable within one pull but not
  from one pull to the next -- give them labels where reproducible snapshots matter.
* **Vertex types.** A subject with an ``rdf:type`` triple whose class is a declared vertex
  type's ``match`` belongs to that type. A subject with the classes of several declared types:
  ``first-declared`` puts it in the first one in spec order; ``every-type`` in each (the checks
  report it as ``vertex-id-in-several-types``); ``reject`` stops the pull with an InputError
  naming the subject. Subjects without a declared class are not vertices.
* **Properties.** A literal object of a declared property's ``from`` predicate, on a subject
  with the type's class, is a value of that property. IRI or blank-node objects are not values
  (declare a relation for them). Values are typed from the datatype, per XML Schema Part 2:
  xsd:integer and its derived types -> int64 (range facets of the derived types are not
  checked: Oxigraph's store rewrites them to xsd:integer); xsd:decimal -> float64 (lossy);
  xsd:double -> float64 and xsd:float -> float64 rounded to single precision, both with INF,
  -INF and NaN; xsd:boolean (``true false 1 0``) -> bool; xsd:dateTime -> timestamp[us, UTC]
  (offsets applied; **no offset is taken as UTC**; digits beyond microseconds dropped);
  xsd:date -> date32 (any offset dropped); xsd:string and rdf:langString -> string; any other
  datatype -> string (the lexical form). Leading and trailing XSD whitespace is allowed for the
  typed kinds. Both kinds read XSD-typed literals in the form Oxigraph's store keeps them in:
  its canonical form (``"PT60M"^^xsd:duration`` is read as ``PT1H``), and it also accepts a
  few forms XSD does not (``inf``, ``Infinity``, ``+NaN`` as xsd:double); an endpoint on
  another server may report those as ill-typed. A literal outside its datatype's lexical
  space (``"abc"^^xsd:integer``), or one the column cannot hold (an integer beyond int64, a
  year outside 1-9999), is null and is counted under the value kind ``ill-typed``; its
  lexical form goes to the snapshot (``Page.raw``). Under a declared ``kind``, literals of
  another kind are ill-typed too, and under ``kind: string`` every literal is its lexical
  form (:mod:`graphmill.connectors._declared`).
* **Several kinds in one property.** integer + float -> float64; any other mix -> strings,
  rendered as the snapshot renders typed values (``1``, ``2.5``, ``true``,
  ``2020-01-01T00:00:00.000000``), with the kind counts in the value-kind profile. The column
  type is chosen per work unit, so it does not depend on paging.
* **Repeated values.** A vertex's values of one property form a set: typed values equal as
  values (``"01"`` and ``"1"`` as xsd:integer, ``"1"^^xsd:int`` too) count once; strings count
  once per lexical form, datatype and language tag (``"chat"@en`` and ``"chat"`` are two
  values, both written ``chat``).
* **Languages.** With ``rdf.languages`` set, a language-tagged literal is kept only if its tag
  is listed (compared ignoring case, whole tags: ``en`` does not keep ``en-GB``), an untagged
  xsd:string literal only if ``""`` is listed; literals of other datatypes are always kept.
  Unset: everything is kept.
* **Relations.** An IRI or blank-node object of a relation's ``match`` predicate is an edge
  from the subject, if the subject is of the relation's ``from`` type (as assigned above). The
  target is whatever node the object is; whether it is a vertex of the ``to`` type is left to
  the checks (``dangling-edge``). Literal objects are ignored. RDF edges carry no properties.
* **Graphs.** ``graphs: default`` reads the default graph; ``union`` the default graph and
  every named graph, merged (a triple in two graphs counts once); a list reads those named
  graphs, merged. ``graph_property`` adds to every vertex a string property holding the graph
  of its ``rdf:type`` triple for the type's class: the graph IRI, ``_:label`` for a blank-node
  graph name, or **the empty string for the default graph**; a vertex typed in several graphs
  has several values (declare nothing: single-valued keeps the smallest, with a warning).

The two kinds give byte-identical snapshots for the same files: ``rdf-store`` answers each
work unit with the SPARQL of :mod:`._queries` on an in-memory Oxigraph store, ``rdf-file``
with Arrow over the parsed quads (:mod:`._facts`), which is faster and keeps only the quads the
spec uses. The SPARQL, the term readers (:mod:`._terms`) and the mapping (:mod:`._mapping`)
are shared with the endpoint source. Neither kind needs rdflib: pyoxigraph reads N-Triples,
N-Quads, Turtle, TriG and RDF/XML (a trailing ``.gz`` is unpacked on the fly).
"""

from __future__ import annotations

from graphmill.connectors.rdf._queries import KeyRange, unit_query, unit_variables
from graphmill.connectors.rdf._terms import read_json_results, read_tsv_results

__all__ = ["KeyRange", "read_json_results", "read_tsv_results", "unit_query", "unit_variables"]
