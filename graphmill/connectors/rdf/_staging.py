"""RDF files -> the quads a plan can use, staged as Parquet parts in bounded memory.

Each file is parsed once as a stream (:func:`stage_stream`): pyoxigraph's parser feeds its
canonical N-Quads writer in blocks of :data:`CHUNK_QUADS` quads, and a worker thread reads
each block into term columns (:func:`._lines.staged_quads`; Arrow releases the GIL, so parsing
and reading overlap), keeps the quads of the selected graphs the plan can use, and writes
them as one Parquet part per block into a folder per role the quad plays:

* ``types/``: ``s o g`` -- ``rdf:type`` triples naming a declared class (``g`` null in the
  default graph);
* ``literals/``: ``s p o o_datatype o_lang`` -- literal objects of property predicates;
* ``links/``: ``s p o`` -- IRI or blank-node objects of relation predicates.

Literals of XSD datatypes are put, block by block, in the canonical form Oxigraph's store
keeps them in (a tiny store holding the block's distinct literals once), so this source and
``rdf-store`` see the same terms. Memory: a few blocks, whatever the size of the files.
"""

from __future__ import annotations

import itertools
import os
from collections import deque
from collections.abc import Iterable
from concurrent.futures import Future, ThreadPoolExecutor
from pathlib import Path

import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from graphmill.connectors._fingerprints import FileFingerprints
from graphmill.connectors.rdf._files import RdfInput, oxigraph, quads, reading
from graphmill.connectors.rdf._plan import RDF_TYPE, RdfPlan
from graphmill.connectors.rdf._reading import ReadingReport
from graphmill.connectors.rdf._terms import read_tsv_results
from graphmill.connectors.rdf._xsd import XSD, XSD_STRING

CHUNK_QUADS = 250_000
GRAPH_FORMATS = frozenset({"n-quads", "trig"})  # the formats that can name graphs
IN_FLIGHT = 2  # blocks parsed ahead of the reading thread
_PROBE = "urn:graphmill:literal"
_TEXT = pa.string()
ROLES = {
    "types": pa.schema([("s", _TEXT), ("o", _TEXT), ("g", _TEXT)]),
    "literals": pa.schema(
        [("s", _TEXT), ("p", _TEXT), ("o", _TEXT), ("o_datatype", _TEXT), ("o_lang", _TEXT)]
    ),
    "links": pa.schema([("s", _TEXT), ("p", _TEXT), ("o", _TEXT)]),
}

# columns with few distinct values, dictionary-encoded in the parts (subjects and objects
# mostly differ from row to row, where a dictionary costs time and saves nothing)
_REPEATED = {"types": {"o", "g"}, "literals": {"p", "o_datatype", "o_lang"}, "links": {"p"}}


def wanted_predicates(plan: RdfPlan) -> list[str]:
    """Predicates whose quads the spec can use."""
    found = [RDF_TYPE, *plan.predicates.values(), *(p for _, p in plan.relations.values())]
    return list(dict.fromkeys(found))


def _escape_lexical(text: pa.Array) -> pa.Array:
    for raw, escaped in (("\\", "\\\\"), ('"', '\\"'), ("\n", "\\n"), ("\r", "\\r")):
        text = pc.replace_substring(text, pattern=raw, replacement=escaped)
    return text


def canonical_literals(table: pa.Table) -> pa.Table:
    """Replace XSD-typed literal objects by the form Oxigraph's store keeps them in.

    Oxigraph stores values, not lexical forms, for the XSD types it knows (``"01"`` becomes
    ``"1"``, ``xsd:int`` becomes ``xsd:integer``, ``"1e3"`` becomes ``"1000"``); doing the same
    here makes ``rdf-file`` agree with ``rdf-store`` term for term. Needs the columns ``o``
    and ``o_datatype``; holds the table's distinct typed literals once while it runs.
    """
    dtype = table.column("o_datatype").combine_chunks()
    typed = pc.fill_null(
        pc.and_(pc.starts_with(dtype, XSD), pc.not_equal(dtype, XSD_STRING)), False
    )
    if not pc.any(typed).as_py():
        return table
    lexical = table.column("o").combine_chunks()
    keys = pc.binary_join_element_wise(dtype, lexical, " ")
    distinct = pc.unique(keys.filter(typed))
    parts = pc.split_pattern(distinct, pattern=" ", max_splits=1)
    numbers = pc.cast(pa.array(range(len(distinct)), pa.int64()), pa.string())
    lines = pc.binary_join_element_wise(
        f"<{_PROBE}/", numbers, f"> <{_PROBE}> \"",
        _escape_lexical(pc.list_element(parts, 1)), '"^^<', pc.list_element(parts, 0), "> .\n", "",
    )  # fmt: skip
    ox = oxigraph()
    store = ox.Store()
    document = pc.binary_join(pa.ListArray.from_arrays([0, len(lines)], lines), "")[0].as_py()
    store.load(document.encode(), format=ox.RdfFormat.N_TRIPLES)
    answer = store.query(f"SELECT ?n ?o WHERE {{ ?n <{_PROBE}> ?o }}")
    found = read_tsv_results(
        answer.serialize(format=ox.QueryResultsFormat.TSV), where="canonical literals"
    )
    order = pc.cast(pc.utf8_slice_codeunits(found.column("n"), len(_PROBE) + 1), pa.int64())
    position = pc.index_in(keys, value_set=distinct)
    lookup = pc.take(pa.array(range(len(found)), pa.int64()).take(pc.sort_indices(order)), position)
    for name in ("o", "o_datatype"):
        canonical = found.column(name).combine_chunks().take(lookup)
        values = pc.if_else(typed, canonical, table.column(name).combine_chunks())
        table = table.set_column(table.schema.get_field_index(name), name, values)
    return table


def _in(column: pa.ChunkedArray | pa.Array, values: Iterable[str]) -> pa.Array:
    return pc.fill_null(pc.is_in(column, value_set=pa.array(list(values), _TEXT)), False)


def split_roles(table: pa.Table, plan: RdfPlan) -> dict[str, pa.Table]:
    """The rows of a quad table (:func:`read_nquads`) each role keeps (module doc)."""
    if plan.graphs == "default":
        table = table.filter(pc.is_null(table.column("g")))
    elif plan.graphs != "union":
        table = table.filter(_in(table.column("g"), plan.graphs))
    kind, predicate = table.column("o_kind"), table.column("p")
    literal = pc.equal(kind, "literal")
    is_type = pc.and_(pc.equal(predicate, RDF_TYPE), pc.equal(kind, "iri"))
    masks = {
        "types": pc.and_(is_type, _in(table.column("o"), plan.classes.values())),
        "literals": pc.and_(literal, _in(predicate, plan.predicates.values())),
        "links": pc.and_(
            pc.invert(literal), _in(predicate, (p for _, p in plan.relations.values()))
        ),
    }
    out = {}
    for role, mask in masks.items():
        rows = table.filter(mask).select(ROLES[role].names)
        if role == "literals":
            rows = canonical_literals(rows)
        out[role] = rows.cast(ROLES[role])
    return out


def empty_parts(folder: Path) -> dict[str, Path]:
    """Make a folder per role in ``folder``, each with an empty part; return their globs."""
    globs = {}
    for role, schema in ROLES.items():
        (folder / role).mkdir(parents=True, exist_ok=True)
        pq.write_table(schema.empty_table(), folder / role / "empty.parquet")
        globs[role] = folder / role / "*.parquet"
    return globs


def write_parts(table: pa.Table, plan: RdfPlan, folder: Path, name: str) -> None:
    """Write the rows of a quad table each role keeps as ``folder/<role>/<name>.parquet``."""
    for role, rows in split_roles(table, plan).items():
        if rows.num_rows:
            repeated = [c for c in rows.column_names if c in _REPEATED[role]]
            pq.write_table(
                rows, folder / role / f"{name}.parquet", compression="lz4", use_dictionary=repeated
            )


def _stage_block(
    block: bytes, predicates: pa.Array, graphs: bool, plan: RdfPlan, folder: Path, name: str
) -> int:
    from graphmill.connectors.rdf._lines import staged_quads

    table = staged_quads(block, predicates, graphs=graphs)
    write_parts(table, plan, folder, name)
    return table.num_rows


def stage_stream(
    item: RdfInput,
    plan: RdfPlan,
    predicates: list[str],
    folder: Path,
    prefix: str,
    *,
    chunk: int | None = None,
    report: ReadingReport | None = None,
    workers: int | None = None,
    prints: FileFingerprints | None = None,
) -> int:
    """Stage ``item`` (any format); return the quads with a wanted predicate.

    N-Triples and N-Quads files of :data:`._lines.PROCESSES_FROM` bytes or more (or any, with
    ``workers``) are staged by worker processes (:func:`._lines.stage_lines`); others in this
    process, in blocks of ``chunk`` quads (default :data:`CHUNK_QUADS`), each told to
    ``report``; the worker path tells the file's sha256 to ``prints``."""
    from graphmill.connectors.rdf import _lines

    if item.format in _lines.LINE_FORMATS:
        if workers is None and item.size >= _lines.PROCESSES_FROM and (os.cpu_count() or 1) > 1:
            workers = _lines.WORKERS
        if workers:
            return _lines.stage_lines(
                item, plan, predicates, folder, prefix, workers=workers, report=report,
                prints=prints,
            )  # fmt: skip
    ox = oxigraph()
    chunk = chunk or CHUNK_QUADS
    wanted = pa.array(predicates, _TEXT)
    graphs = item.format in GRAPH_FORMATS
    pool = ThreadPoolExecutor(max_workers=1, thread_name_prefix="graphmill-rdf-stage")
    pending: deque[Future[int]] = deque()
    kept = 0
    try:
        position = report.position if report is not None else None
        with quads(item, position=position) as parser, reading(item):
            for index in itertools.count():
                block = ox.serialize(itertools.islice(parser, chunk), format=ox.RdfFormat.N_QUADS)
                if not block:
                    break
                name = f"{prefix}-{index:07d}"
                pending.append(pool.submit(_stage_block, block, wanted, graphs, plan, folder, name))
                while len(pending) > IN_FLIGHT:
                    kept += pending.popleft().result()
                if report is not None:
                    report.update(block.count(b"\n"))
            while pending:
                kept += pending.popleft().result()
    finally:
        pool.shutdown(wait=True, cancel_futures=True)
    return kept
