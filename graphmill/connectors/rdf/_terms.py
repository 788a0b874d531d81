"""RDF terms written in Turtle / N-Triples syntax, parsed into Arrow columns, vectorized.

A *term table* has four columns per variable ``v``:

* ``v`` -- the IRI text, ``_:label`` for a blank node, or a literal's lexical form (unescaped);
* ``v_kind`` -- ``iri``, ``blank`` or ``literal``;
* ``v_datatype`` -- the literal's datatype IRI (``xsd:string`` for a plain literal,
  ``rdf:langString`` for a language-tagged one); null for IRIs and blank nodes;
* ``v_lang`` -- the language tag as written, ``""`` for an untagged literal, null otherwise.

An unbound variable is null in all four. Readers: :func:`read_tsv_results` (W3C "SPARQL 1.1
Query Results CSV and TSV Formats", section 3), :func:`read_json_results` (W3C "SPARQL 1.1
Query Results JSON Format") and :func:`read_nquads` (canonical N-Quads as Oxigraph writes it).
Malformed documents raise :class:`~graphmill.errors.MalformedResponseError`.
"""

from __future__ import annotations

import io
import json
import re
from collections.abc import Iterator
from typing import Any

import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pacsv

from graphmill.connectors.rdf._xsd import RDF_LANG_STRING, XSD, XSD_STRING
from graphmill.errors import MalformedResponseError

TERM_SUFFIXES = ("", "_kind", "_datatype", "_lang")
_NULL = pa.scalar(None, pa.string())
_SUFFIX = r"^(?:@(?P<lang>[A-Za-z]+(?:-[A-Za-z0-9]+)*)|\^\^<(?P<dt>[^<>\"\s]*)>)?$"
# Turtle short forms (Turtle, section 2.5.2) that SPARQL TSV results may use.
_SHORT = (
    (r"^[+-]?[0-9]+$", XSD + "integer"),
    (r"^[+-]?[0-9]*\.[0-9]+$", XSD + "decimal"),
    (r"^[+-]?([0-9]+\.?[0-9]*|\.[0-9]+)[eE][+-]?[0-9]+$", XSD + "double"),
    (r"^(true|false)$", XSD + "boolean"),
)
_ECHAR = {"t": "\t", "b": "\b", "n": "\n", "r": "\r", "f": "\f", '"': '"', "'": "'"}
_UCHAR = re.compile(r"\\u([0-9A-Fa-f]{4})|\\U([0-9A-Fa-f]{8})")
_GRAPH_TAIL = r' (?P<g><[^<>"\s]*>|_:[^\s"\\<>]+)$'


def _flat(array: pa.Array | pa.ChunkedArray) -> pa.Array:
    return array.combine_chunks() if isinstance(array, pa.ChunkedArray) else array


def _byte_slice(text: pa.Array, start: int, stop: int | None = None) -> pa.Array:
    """``text`` sliced by bytes (no UTF-8 decoding): only for cutting ASCII delimiters."""
    raw = text.view(pa.binary())
    if stop is None:  # (None overflows the kernel's size estimate on long arrays)
        stop = (pc.max(pc.binary_length(raw)).as_py() or 0) + 1
    return pc.binary_slice(raw, start, stop).view(pa.string())


def _decode_uchars(text: str) -> str:
    decoded = _UCHAR.sub(lambda m: chr(int(m.group(1) or m.group(2), 16)), text)
    return decoded.encode("utf-16", "surrogatepass").decode("utf-16")


def unescape(text: pa.Array) -> pa.Array:
    """Undo string escapes (Turtle ECHAR ``\\t \\b \\n \\r \\f \\" \\' \\\\`` and UCHAR).

    Escaped backslashes are split out first, so ``\\\\n`` stays a backslash and an ``n``.
    Only rows holding a ``\\u``/``\\U`` escape (rare in practice) are decoded in Python.
    """
    text = _flat(text)
    if not pc.any(pc.fill_null(pc.match_substring(text, "\\"), False)).as_py():
        return text
    pieces = pc.split_pattern(text, pattern="\\\\")
    flat = pc.list_flatten(pieces)
    for letter, char in _ECHAR.items():
        flat = pc.replace_substring(flat, pattern="\\" + letter, replacement=char)
    has_uchar = pc.fill_null(pc.match_substring_regex(flat, r"\\[uU]"), False)
    if pc.any(has_uchar).as_py():
        picked = flat.filter(has_uchar).to_pylist()
        decoded = pa.array([_decode_uchars(s) for s in picked], pa.string())
        flat = pc.replace_with_mask(flat, has_uchar, decoded)
    rebuilt = pa.ListArray.from_arrays(pieces.offsets, flat, mask=pc.is_null(pieces))
    return pc.binary_join(rebuilt, "\\")


def _malformed(cells: pa.Array, bad: pa.Array, where: str) -> MalformedResponseError:
    sample = cells.filter(bad)[0].as_py()
    return MalformedResponseError(
        f"{pc.sum(bad).as_py()} cells are not RDF terms in Turtle syntax, e.g. {sample[:80]!r}",
        source=where,
        hint="check that the server speaks the SPARQL 1.1 results format it announced",
    )


def _scatter(mask: pa.Array, values: Any, into: pa.Array) -> pa.Array:
    """``into`` with the rows under ``mask`` replaced by ``values`` (an array or a scalar)."""
    if isinstance(values, str):
        return pc.if_else(mask, values, into)
    return pc.replace_with_mask(into, mask, values)


def _literals(cells: pa.Array, quote: str, where: str) -> tuple[pa.Array, pa.Array, pa.Array]:
    """(lexical, datatype, lang) of quoted literals; the closing quote is the last one, as
    neither ``@lang`` nor ``^^<iri>`` can hold a quote."""
    parts = pc.split_pattern(cells, pattern=quote, max_splits=1, reverse=True)
    head, suffix = pc.list_element(parts, 0), pc.list_element(parts, 1)
    tail = pc.extract_regex(suffix, _SUFFIX)
    if tail.null_count:
        raise _malformed(cells, pc.is_null(tail), where)
    tag, dt = pc.struct_field(tail, "lang"), pc.struct_field(tail, "dt")
    tagged = pc.greater(pc.utf8_length(tag), 0)
    dt = pc.if_else(tagged, RDF_LANG_STRING, pc.if_else(pc.equal(dt, ""), XSD_STRING, dt))
    return unescape(_byte_slice(head, 1)), dt, tag


def split_terms(cells: pa.Array, *, where: str = "SPARQL results") -> dict[str, pa.Array]:
    """Parse Turtle-syntax term cells into ``value``, ``kind``, ``datatype`` and ``lang``."""
    cells = _flat(cells)
    n = len(cells)
    value = kind = datatype = lang = pa.nulls(n, pa.string())
    first = _byte_slice(cells, 0, 1)
    is_iri = pc.fill_null(pc.and_(pc.equal(first, "<"), pc.ends_with(cells, ">")), False)
    if pc.any(is_iri).as_py():
        iris = unescape(_byte_slice(cells.filter(is_iri), 1, -1))
        value, kind = _scatter(is_iri, iris, value), _scatter(is_iri, "iri", kind)
    is_blank = pc.fill_null(pc.starts_with(cells, "_:"), False)
    value, kind = pc.if_else(is_blank, cells, value), _scatter(is_blank, "blank", kind)
    known = pc.or_(pc.or_(is_iri, is_blank), pc.is_null(cells))
    for quote in ('"', "'"):
        mask = pc.fill_null(pc.and_(pc.equal(first, quote), pc.invert(known)), False)
        if not pc.any(mask).as_py():
            continue
        lexical, dt, tag = _literals(cells.filter(mask), quote, where)
        value, kind = _scatter(mask, lexical, value), _scatter(mask, "literal", kind)
        datatype, lang = _scatter(mask, dt, datatype), _scatter(mask, tag, lang)
        known = pc.or_(known, mask)
    for pattern, short_type in _SHORT:
        if not known.false_count:
            break
        mask = pc.and_(
            pc.fill_null(pc.match_substring_regex(cells, pattern), False), pc.invert(known)
        )
        value, kind = pc.if_else(mask, cells, value), _scatter(mask, "literal", kind)
        datatype, lang = _scatter(mask, short_type, datatype), _scatter(mask, "", lang)
        known = pc.or_(known, mask)
    if known.false_count:
        raise _malformed(cells, pc.invert(known), where)
    return {"": value, "_kind": kind, "_datatype": datatype, "_lang": lang}


def _term_table(columns: dict[str, pa.Array], where: str) -> pa.Table:
    out: dict[str, pa.Array] = {}
    for name, cells in columns.items():
        for suffix, array in split_terms(cells, where=where).items():
            out[name + suffix] = array
    return pa.table(out) if out else pa.table({})


def read_tsv_results(data: bytes, *, where: str = "SPARQL TSV results") -> pa.Table:
    """A SPARQL 1.1 TSV results document -> term table (see the module doc)."""
    header, _, body = data.partition(b"\n")
    names = [v.strip() for v in header.decode("utf-8", "replace").rstrip("\r").split("\t")]
    if not names or not all(re.fullmatch(r"[?$][A-Za-z0-9_]+", v) for v in names):
        raise MalformedResponseError(
            f"the first line is not a TSV results header: {header[:80]!r}", source=where
        )
    names = [v[1:] for v in names]
    if not body.strip():
        return _term_table({n: pa.array([], pa.string()) for n in names}, where)
    try:
        table = _read_tsv_body(body, names)
    except pa.ArrowInvalid as exc:
        raise MalformedResponseError(f"not a TSV results table: {exc}", source=where) from exc
    return _term_table({n: _flat(table.column(n)) for n in names}, where)


def _read_tsv_body(body: bytes, names: list[str], block_size: int = 1 << 20) -> pa.Table:
    """The rows of a TSV results document; a line longer than a block (a literal of several
    megabytes) is read again in one block instead of failing."""
    try:
        return pacsv.read_csv(
            io.BytesIO(body),
            read_options=pacsv.ReadOptions(column_names=names, block_size=block_size),
            parse_options=pacsv.ParseOptions(
                delimiter="\t", quote_char=False, escape_char=False, double_quote=False
            ),
            convert_options=pacsv.ConvertOptions(
                column_types=dict.fromkeys(names, pa.string()),
                strings_can_be_null=True,
                null_values=[""],
            ),
        )
    except pa.ArrowInvalid as exc:
        if "straddl" not in str(exc) or block_size > len(body):
            raise
        return _read_tsv_body(body, names, block_size=len(body) + 1)


_JSON_TERM = pa.struct(
    [
        ("type", pa.string()),
        ("value", pa.string()),
        ("xml:lang", pa.string()),
        ("datatype", pa.string()),
    ]
)
_JSON_KIND = {"uri": "iri", "bnode": "blank", "literal": "literal", "typed-literal": "literal"}


def read_json_results(data: bytes | str, *, where: str = "SPARQL JSON results") -> pa.Table:
    """A SPARQL 1.1 JSON results document -> term table (``typed-literal`` is accepted too)."""
    try:
        document = json.loads(data)
        names = list(document["head"]["vars"])
        bindings = document["results"]["bindings"]
        rows = pa.array(bindings, type=pa.struct([(n, _JSON_TERM) for n in names]))
    except (ValueError, KeyError, TypeError, pa.ArrowException) as exc:
        raise MalformedResponseError(
            f"not a SPARQL JSON results document: {exc}", source=where
        ) from exc
    out: dict[str, pa.Array] = {}
    for name in names:
        term = pc.struct_field(rows, name)
        bound = pc.and_(pc.is_valid(rows), pc.is_valid(term))
        kind = pc.take(
            pa.array(list(_JSON_KIND.values())),
            pc.index_in(pc.struct_field(term, "type"), value_set=pa.array(list(_JSON_KIND))),
        )
        kind = pc.if_else(bound, kind, _NULL)
        bad = pc.and_(bound, pc.is_null(kind))
        if pc.any(bad).as_py():
            sample = pc.struct_field(term, "type").filter(bad)[0].as_py()
            raise MalformedResponseError(f"unknown RDF term type {sample!r}", source=where)
        raw = pc.struct_field(term, "value")
        literal = pc.equal(kind, "literal")
        tag = pc.fill_null(pc.struct_field(term, "xml:lang"), "")
        dt = pc.struct_field(term, "datatype")
        dt = pc.if_else(
            pc.greater(pc.utf8_length(tag), 0), RDF_LANG_STRING, pc.fill_null(dt, XSD_STRING)
        )
        value = pc.if_else(pc.equal(kind, "blank"), pc.binary_join_element_wise("_:", raw, ""), raw)
        out[name] = pc.if_else(bound, value, _NULL)
        out[name + "_kind"] = kind
        out[name + "_datatype"] = pc.if_else(literal, dt, _NULL)
        out[name + "_lang"] = pc.if_else(literal, tag, _NULL)
    return pa.table(out) if out else pa.table({})


def read_nquads(
    data: bytes, *, predicates: pa.Array | None = None, graphs: bool = True
) -> pa.Table:
    """Canonical N-Quads (one quad a line, as Oxigraph writes them) -> columns ``s*``, ``p``,
    ``o*``, ``g*`` (term tables; ``g`` null in the default graph).

    ``predicates`` (IRIs) keeps only quads with those predicates, before objects are parsed;
    ``graphs=False`` says that no line names a graph (N-Triples), which skips looking.
    """
    offsets = pa.array([0, len(data)], pa.int32())
    text = pa.StringArray.from_buffers(1, offsets.buffers()[1], pa.py_buffer(data))
    text.validate(full=True)  # UTF-8
    lines = pc.list_flatten(pc.split_pattern(text, pattern="\n"))
    lines = lines.filter(pc.greater(pc.binary_length(lines), 0))
    parts = pc.split_pattern(lines, pattern=" ", max_splits=2)
    subject = pc.list_element(parts, 0)
    predicate = _byte_slice(pc.list_element(parts, 1), 1, -1)
    rest = pc.list_element(parts, 2)
    if predicates is not None:
        keep = pc.is_in(predicate, value_set=predicates)
        subject, predicate, rest = subject.filter(keep), predicate.filter(keep), rest.filter(keep)
    rest = _byte_slice(rest, 0, -2)  # the closing " ."
    if graphs:
        # The graph, if any, is the last space-separated token: no object can end in one.
        graph = pc.struct_field(pc.extract_regex(rest, _GRAPH_TAIL), "g")
        obj = pc.replace_substring_regex(rest, pattern=_GRAPH_TAIL, replacement="")
    else:
        graph, obj = pa.nulls(len(rest), pa.string()), rest
    where = "N-Quads"
    out = {"s" + k: v for k, v in split_terms(subject, where=where).items()}
    out["p"] = predicate
    out.update({"o" + k: v for k, v in split_terms(obj, where=where).items()})
    out.update({"g" + k: v for k, v in split_terms(graph, where=where).items()})
    return pa.table(out)


TSV_BLOCK_BYTES = 8 << 20


def read_tsv_file(
    path: str, *, where: str = "SPARQL TSV results", block_bytes: int | None = None
) -> Iterator[pa.Table]:
    """A SPARQL 1.1 TSV results file -> term tables of about ``block_bytes`` each (default
    :data:`TSV_BLOCK_BYTES`), streamed."""
    with open(path, "rb") as fh:
        header = fh.readline()
    names = [v.strip() for v in header.decode("utf-8", "replace").rstrip("\r\n").split("\t")]
    if not names or not all(re.fullmatch(r"[?$][A-Za-z0-9_]+", v) for v in names):
        raise MalformedResponseError(
            f"the first line is not a TSV results header: {header[:80]!r}", source=where
        )
    names = [v[1:] for v in names]
    try:
        reader = pacsv.open_csv(
            path,
            read_options=pacsv.ReadOptions(
                column_names=names, skip_rows=1, block_size=block_bytes or TSV_BLOCK_BYTES
            ),
            parse_options=pacsv.ParseOptions(
                delimiter="\t", quote_char=False, escape_char=False, double_quote=False
            ),
            convert_options=pacsv.ConvertOptions(
                column_types=dict.fromkeys(names, pa.string()),
                strings_can_be_null=True,
                null_values=[""],
            ),
        )
        for batch in reader:
            if batch.num_rows:
                yield _term_table({n: batch.column(n) for n in names}, where)
    except pa.ArrowInvalid as exc:
        raise MalformedResponseError(f"not a TSV results table: {exc}", source=where) from exc
