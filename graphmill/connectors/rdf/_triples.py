"""Triples as pyoxigraph's N-Quads writer writes them, cut into term columns with numpy.

A line of the writer is ``S P O .`` (no graph: the triple formats), where ``S`` is ``<iri>``
or ``_:label``, ``P`` is ``<iri>``, and ``O`` is ``<iri>``, ``_:label``, ``"lexical"``,
``"lexical"@lang`` or ``"lexical"^^<datatype>``. IRIs, labels, tags and datatypes hold no
space and no quote, so each term's bytes are found from the positions of the line ends,
the first two spaces of each line and the last quote before its end, all at once with
numpy; each column is then copied once out of the block (:func:`_slices`). Only literals'
lexical forms can hold escapes, which :func:`._terms.unescape` undoes. :func:`fast_triples`
returns None for anything else (a graph, a triple term, an empty line), which the general
reader then reads. Same values as :func:`._terms.read_nquads` (tested).
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from graphmill.connectors.rdf._terms import unescape
from graphmill.connectors.rdf._xsd import RDF_LANG_STRING, XSD_STRING

_LT, _QUOTE, _UNDERSCORE, _AT = ord("<"), ord('"'), ord("_"), ord("@")
_NULL = pa.scalar(None, pa.string())
_KINDS = pa.array(["iri", "blank", "literal"], pa.string())


def _slices(buffer: pa.Buffer, starts: np.ndarray, stops: np.ndarray) -> pa.Array:
    """The strings ``buffer[starts[i]:stops[i]]`` (in order, not overlapping), copied once."""
    n = len(starts)
    if not n:
        return pa.array([], pa.string())
    offsets = np.empty(2 * n, np.int64)
    offsets[0::2], offsets[1::2] = starts, stops
    whole = pa.LargeStringArray.from_buffers(2 * n - 1, pa.py_buffer(offsets), buffer)
    picked = whole.take(pa.array(np.arange(0, 2 * n - 1, 2)))
    return picked.cast(pa.string())


def fast_triples(data: bytes, predicates: pa.Array) -> pa.Table | None:
    """``s p o o_kind o_datatype o_lang g`` of the writer's triples with one of
    ``predicates`` (``g`` null), or None when ``data`` holds a line of another shape."""
    raw = np.frombuffer(data, np.uint8)
    if not len(raw) or raw[-1] != 10:
        return None
    ends = np.flatnonzero(raw == 10)
    starts = np.empty_like(ends)
    starts[0], starts[1:] = 0, ends[:-1] + 1
    if np.any(ends - starts < 7):  # the shortest triple: "_:a <> _:b ." is longer
        return None
    spaces = np.flatnonzero(raw == 32)
    first = np.searchsorted(spaces, starts)
    if first[-1] + 1 >= len(spaces):
        return None
    sp1, sp2 = spaces[first], spaces[first + 1]
    subject_iri = raw[starts] == _LT
    if not (np.all(subject_iri | (raw[starts] == _UNDERSCORE)) and np.all(raw[sp1 + 1] == _LT)):
        return None
    stops = ends - 2  # before " .\n"
    if not (np.all(raw[stops] == 32) and np.all(raw[ends - 1] == 46) and np.all(sp2 < stops)):
        return None
    block = pa.py_buffer(data)
    predicate = _slices(block, sp1 + 2, sp2 - 1)
    keep = pc.is_in(predicate, value_set=predicates).to_numpy(zero_copy_only=False)
    predicate = predicate.filter(pa.array(keep))
    starts, sp1, sp2, stops = starts[keep], sp1[keep], sp2[keep], stops[keep]
    subject_iri = subject_iri[keep]
    subject = _slices(block, starts + subject_iri, sp1 - subject_iri)
    columns = _objects(raw, block, sp2 + 1, stops)
    if columns is None:
        return None
    n = len(starts)
    return pa.table({"s": subject, "p": predicate, **columns, "g": pa.nulls(n, pa.string())})


def _objects(
    raw: np.ndarray, block: pa.Buffer, begin: np.ndarray, stop: np.ndarray
) -> dict[str, pa.Array] | None:
    """``o o_kind o_datatype o_lang`` of the object terms ``raw[begin:stop]``."""
    lead = raw[begin]
    iri, blank, literal = lead == _LT, lead == _UNDERSCORE, lead == _QUOTE
    if not np.all(iri | blank | literal):
        return None
    quotes = np.flatnonzero(raw == _QUOTE)
    last = quotes[np.maximum(np.searchsorted(quotes, stop) - 1, 0)] if len(quotes) else begin
    last = np.where(literal, last, stop)  # the closing quote of a literal
    if np.any(literal & (last <= begin)):
        return None
    spaces = np.flatnonzero(raw == 32)  # a term with a space after it: a graph, a triple term
    if np.any(spaces[np.searchsorted(spaces, np.where(literal, last, begin))] != stop):
        return None
    value_start = begin + (iri | literal)
    value_stop = np.where(iri, stop - 1, np.where(literal, last, stop))
    after = np.minimum(last + 1, len(raw) - 1)
    tagged = literal & (last + 1 < stop) & (raw[after] == _AT)
    typed = literal & (last + 1 < stop) & ~tagged
    lang_start = np.where(tagged, last + 2, stop)
    type_start = np.where(typed, last + 4, stop)  # after '"^^<'
    type_stop = np.where(typed, stop - 1, stop)
    value = _slices(block, value_start, value_stop)
    if np.any(literal):
        value = unescape(value)
    kind = pa.DictionaryArray.from_arrays(
        pa.array(np.where(iri, 0, np.where(blank, 1, 2)).astype(np.int8)), _KINDS
    ).cast(pa.string())
    is_literal = pa.array(literal)
    lang = pc.if_else(is_literal, _slices(block, lang_start, stop), _NULL)
    datatype = _slices(block, type_start, type_stop)
    datatype = pc.if_else(pa.array(tagged), RDF_LANG_STRING, datatype)
    plain = literal & ~tagged & ~typed
    datatype = pc.if_else(pa.array(plain), XSD_STRING, datatype)
    datatype = pc.if_else(is_literal, datatype, _NULL)
    return {"o": value, "o_kind": kind, "o_datatype": datatype, "o_lang": lang}


_XSD_STRING_TAIL = b"XMLSchema#string>"
_TAG_BYTES = 24  # language tags longer than this are left to the writer


def written_as_is(block: bytes) -> bool:
    """Whether pyoxigraph's writer would write the N-Triples lines of ``block`` unchanged,
    as far as bytes tell: no backslash (escapes), no control character but line feeds, no
    ``^^xsd:string`` (the writer drops it), no upper-case letter in a language tag (the
    parser lowers them). The lines' shape is checked by :func:`fast_triples`."""
    raw = np.frombuffer(block, np.uint8)
    if np.count_nonzero(raw < 32) != np.count_nonzero(raw == 10):
        return False
    if np.any(raw == 92) or np.any(raw == 127) or _XSD_STRING_TAIL in block:
        return False
    tags = np.flatnonzero((raw[1:] == _AT) & (raw[:-1] == _QUOTE)) + 2  # no '"@' in a value:
    if not len(tags):  # a quote inside a literal would be escaped
        return True
    window = raw[np.minimum(tags[:, None] + np.arange(_TAG_BYTES), len(raw) - 1)]
    inside = np.cumprod(window != 32, axis=1).astype(bool)
    if inside[:, -1].any():
        return False
    return not np.any(inside & (window >= ord("A")) & (window <= ord("Z")))
