"""An Oxigraph store on disk for ``rdf-store``: bulk-loaded once, reused while inputs stay.

The folder holds the store's files and ``graphmill-store.json``, which names the inputs it was
loaded from (resolved path, format, size, modification time) and whether loading finished.
:func:`open_disk_store` reuses a finished store of the same inputs, reloads one of other
inputs or one whose loading was interrupted, and refuses a folder holding anything else
(it is never emptied unless graphmill made it).

:func:`stage_store` reads from a store, by index scans per wanted predicate (``rdf:type``: per
declared class), the quads a plan can use, and stages them as :mod:`._staging` stages a
dump's: ``rdf-store`` on disk then answers units with the same DuckDB joins as ``rdf-file``
(:class:`._facts.FactParts`) instead of SPARQL, whose joins Oxigraph evaluates in memory
that grows with the store. Scans stream, a block of quads at a time.
"""

from __future__ import annotations

import itertools
import json
import shutil
from pathlib import Path
from typing import Any

import pyarrow as pa

from graphmill._atomic import write_bytes_atomic
from graphmill._progress import Progress, SilentProgress
from graphmill.connectors.rdf._files import RdfInput, oxigraph, quads
from graphmill.connectors.rdf._lines import staged_quads
from graphmill.connectors.rdf._plan import RDF_TYPE, RdfPlan
from graphmill.connectors.rdf._reading import ReadingReport, quad_blocks
from graphmill.connectors.rdf._staging import CHUNK_QUADS, wanted_predicates, write_parts
from graphmill.errors import SourceUnavailableError, SpecError

MARKER = "graphmill-store.json"


def _inputs_key(inputs: list[RdfInput]) -> list[dict[str, Any]]:
    out = []
    for item in inputs:
        stat = item.path.stat()
        out.append(
            {
                "path": str(item.path.resolve()),
                "format": item.format,
                "bytes": stat.st_size,
                "modified_ns": stat.st_mtime_ns,
            }
        )
    return out


def _marker(folder: Path) -> dict[str, Any] | None:
    try:
        loaded = json.loads((folder / MARKER).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    return loaded if isinstance(loaded, dict) else None


def open_disk_store(
    folder: Path, inputs: list[RdfInput], *, shown: str = "", progress: Progress | None = None
) -> Any:
    """A pyoxigraph ``Store`` in ``folder`` holding exactly ``inputs`` (loading them if needed).

    ``shown`` is the folder as the spec names it (for messages). Raises SpecError when the
    folder holds files graphmill did not write, SourceUnavailableError when it cannot be used.
    """
    ox = oxigraph()
    key = _inputs_key(inputs)
    marker = _marker(folder)
    if folder.exists() and any(folder.iterdir()) and marker is None:
        raise SpecError(
            f"the store folder {shown or str(folder)!r} holds files that are not a graphmill store",
            key_path="source.store_folder",
            hint="name a new or empty folder",
        )
    if marker is not None and marker.get("inputs") == key and marker.get("state") == "loaded":
        return _open(ox, folder, shown)
    if marker is not None:  # ours, of other inputs or half loaded: start afresh
        shutil.rmtree(folder)
    folder.mkdir(parents=True, exist_ok=True)
    write_bytes_atomic(folder / MARKER, json.dumps({"state": "loading", "inputs": key}).encode())
    store = _open(ox, folder, shown)
    for item in inputs:
        report = ReadingReport(progress or SilentProgress(), item, verb="load")
        with quads(item, position=report.position) as parser:
            # bulk_extend keeps blank node labels as written; bulk_load renames them.
            for block in quad_blocks(parser, report):
                store.bulk_extend(block)
    store.flush()
    write_bytes_atomic(folder / MARKER, json.dumps({"state": "loaded", "inputs": key}).encode())
    return store


def _open(ox: Any, folder: Path, shown: str) -> Any:
    try:
        return ox.Store(str(folder))
    except OSError as exc:
        raise SourceUnavailableError(
            f"cannot open the store folder {shown or str(folder)!r}: {exc}",
            hint="check that no other process uses it and that it is writable",
        ) from exc


def store_patterns(plan: RdfPlan) -> list[tuple[str, str | None]]:
    """(predicate, object or None) of the scans :func:`stage_store` makes."""
    found: list[tuple[str, str | None]] = []
    for predicate in wanted_predicates(plan):
        if predicate == RDF_TYPE:
            found += [(RDF_TYPE, c) for c in dict.fromkeys(plan.classes.values())]
        else:
            found.append((predicate, None))
    return found


def stage_store(store: Any, plan: RdfPlan, folder: Path, *, chunk: int | None = None) -> int:
    """Stage the quads of ``store`` that ``plan`` can use into the role folders of ``folder``
    (made by :func:`._staging.empty_parts`); return how many were read."""
    ox = oxigraph()
    graph = ox.DefaultGraph() if plan.graphs == "default" else None
    wanted = pa.array(wanted_predicates(plan), pa.string())
    read = 0
    for number, (predicate, obj) in enumerate(store_patterns(plan)):
        target = None if obj is None else ox.NamedNode(obj)
        found = store.quads_for_pattern(None, ox.NamedNode(predicate), target, graph)
        for index in itertools.count():
            block = ox.serialize(
                itertools.islice(found, chunk or CHUNK_QUADS), format=ox.RdfFormat.N_QUADS
            )
            if not block:
                break
            table = staged_quads(block, wanted)
            write_parts(table, plan, folder, f"store-{number:04d}-{index:07d}")
            read += table.num_rows
    return read
