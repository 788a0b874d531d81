"""A subject's values read on separate pages, in any order, are made distinct per subject.

Each subject holds one integer written three ways, in three named graphs (``"+k"`` as
xsd:integer, ``"0k"`` as xsd:long, ``"k"`` as xsd:int: one value, XSD 1.1 Part 2, 3.4.13 --
the derived integer types share xsd:integer's value space), plus two labels that are distinct
(``"x"@en`` and ``"x"@de``: RDF 1.1 Concepts 3.3, a language tag is part of the literal).
The quads are shuffled, the spec reads a list of the three graphs, and pages are of two rows
mapped a row at a time, so a subject's rows come apart (on Fuseki, which answers graph by
graph; checked here from the pages themselves); the snapshot must still hold one
``count`` value per subject, two labels, and the bytes ``rdf-file`` gives.
"""

from __future__ import annotations

import random
from pathlib import Path
from typing import Any

import pytest
from sparql_helpers import endpoint, pull_spec, snapshot_files

from graphmill.connectors import open_source
from graphmill.connectors.base import VERTEX_ID, WorkUnit
from graphmill.snapshot import Snapshot
from graphmill.spec import spec_from_dict
from servers.manage import N_QUADS, FusekiServer, OxigraphServer
from servers.pytest_fixtures import started

pytestmark = pytest.mark.servers
EX = "http://s.test/"
X = "http://www.w3.org/2001/XMLSchema#"
GRAPHS = [f"{EX}g/{n}" for n in ("a", "b", "c")]
SUBJECTS = 12


def split_nquads(seed: int = 5) -> str:
    lines = []
    for i in range(SUBJECTS):
        s, k = f"<{EX}n{i:02d}>", i % 5
        lines.append(f"{s} <http://www.w3.org/1999/02/22-rdf-syntax-ns#type> <{EX}T> <{GRAPHS[0]}>")
        for graph, term in zip(
            GRAPHS, [f'"+{k}"^^<{X}integer>', f'"0{k}"^^<{X}long>', f'"{k}"^^<{X}int>'], strict=True
        ):
            lines.append(f"{s} <{EX}count> {term} <{graph}>")
        lines.append(f'{s} <{EX}label> "x{i}"@en <{GRAPHS[1]}>')
        lines.append(f'{s} <{EX}label> "x{i}"@de <{GRAPHS[2]}>')
    random.Random(seed).shuffle(lines)
    return "".join(f"{line} .\n" for line in lines)


def _doc(source: dict[str, Any], out: Path) -> dict[str, Any]:
    return {
        "spec_version": 1,
        "name": "split",
        "source": source,
        "rdf": {"prefixes": {"ex": EX}, "graphs": GRAPHS},
        "vertex_types": {
            "t": {
                "match": "ex:T",
                "properties": {
                    "count": {"from": "ex:count", "kind": "integer", "multi": True},
                    "label": {"from": "ex:label", "multi": True},
                },
            }
        },
        "relations": [],
        "output": {"bundle": str(out / "bundle"), "snapshot": str(out / "snapshot")},
    }


@pytest.fixture(scope="module")
def dump(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("split") / "split.nq"
    path.write_text(split_nquads(), encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def servers(dump: Path):
    with started(OxigraphServer(preload=[dump])) as oxigraph, started(FusekiServer()) as fuseki:
        fuseki.load(dump.read_bytes(), content_type=N_QUADS)
        yield {"oxigraph": oxigraph, "fuseki": fuseki}


@pytest.fixture(scope="module")
def reference(dump: Path, tmp_path_factory: pytest.TempPathFactory) -> dict[str, bytes]:
    root = tmp_path_factory.mktemp("split-rdf-file")
    pull_spec(_doc({"kind": "rdf-file", "paths": [str(dump)]}, root))
    snap = Snapshot.open(root / "snapshot")
    rows = snap.vertices("t").to_pylist()
    # checked from the data's construction (module doc), not from any source
    assert [r["count"] for r in rows] == [[i % 5] for i in range(SUBJECTS)]
    assert [sorted(r["label"]) for r in rows] == [[f"x{i}"] * 2 for i in range(SUBJECTS)]
    assert snap.value_kinds("vertices", "t")["count"] == {"integer": SUBJECTS}
    return snapshot_files(root / "snapshot")


@pytest.mark.parametrize("server", ["fuseki", "oxigraph"])
@pytest.mark.parametrize("paging", ["auto", "key-range"])
def test_values_on_separate_pages_are_kept_once(
    servers, reference, tmp_path, server, paging, monkeypatch
):
    monkeypatch.setattr("graphmill.connectors.sparql._building.MAP_ROWS", 1)
    options = {"page_size": 2} if paging == "auto" else {"paging": paging, "page_size": 2}
    doc = _doc(endpoint(servers[server].query_url, **options), tmp_path)
    if (server, paging) == ("fuseki", "auto"):
        # the case this test is about: Fuseki answers graph by graph, so a subject's rows
        # come on two pages (Oxigraph happens to send them together here)
        spec = spec_from_dict(doc)
        with open_source(spec) as source:
            pages = list(source.read(WorkUnit("vertices", "t", facet="count")))
        seen: dict[str, int] = {}
        for page in pages:
            for vertex in set(page.batch.column(VERTEX_ID).to_pylist()):
                seen[vertex] = seen.get(vertex, 0) + 1
        assert len(pages) > 1 and max(seen.values()) > 1, f"{server} sent no subject apart"
    pull_spec(doc)
    assert snapshot_files(tmp_path / "snapshot") == reference
