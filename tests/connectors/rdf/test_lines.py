"""Line-based dumps staged by worker processes (``_lines``): same values, same errors.

The worker path is forced on small files by lowering ``PROCESSES_FROM`` and cut into blocks
of a few hundred bytes, so that statements, errors and archives fall across block edges.
Reference values: pyoxigraph's N-Quads reader as the general term reader reads it
(:func:`read_nquads`), the single-stream staging path, and the W3C N-Triples bad cases.
"""

from __future__ import annotations

import gzip
import hashlib
import io
import json
import random
from pathlib import Path

import pyarrow as pa
import pyoxigraph as ox
import pytest
from rdfsource_helpers import pull_snapshot, rdf_spec, table_hashes
from test_differential import CONFIGS, random_dump
from test_differential import _spec as differential_spec

from graphmill.connectors import _fingerprints, open_source
from graphmill.connectors.rdf import _lines
from graphmill.connectors.rdf._lines import line_blocks, staged_quads
from graphmill.connectors.rdf._plan import RDF_TYPE
from graphmill.connectors.rdf._terms import read_nquads
from graphmill.connectors.rdf._triples import fast_triples, written_as_is
from graphmill.errors import InputError
from graphmill.spec import spec_from_dict

CASES = Path(__file__).resolve().parents[2] / "data" / "rdf" / "ntriples"
BAD = json.loads((CASES / "manifest.json").read_text(encoding="utf-8"))["bad"]
NODE = "urn:graphmill-test:Node"
GOOD = '<urn:graphmill-test:a> <urn:graphmill-test:p> "a value long enough" .\n'


@pytest.fixture
def workers(monkeypatch):
    """The worker path for every line-based file, in blocks of about 300 bytes."""
    monkeypatch.setattr(_lines, "PROCESSES_FROM", 0)
    monkeypatch.setattr(_lines, "BLOCK_BYTES", 300)
    monkeypatch.setattr(_lines, "WORKERS", 1)


@pytest.mark.parametrize("seed", [1, 2, 3, 4])
def test_staged_quads_reads_what_the_term_reader_reads(seed):
    written = ox.serialize(
        ox.parse(random_dump(seed).encode(), format=ox.RdfFormat.N_QUADS),
        format=ox.RdfFormat.N_QUADS,
    )
    wanted = pa.array(
        [f"http://example.org/{p}" for p in "pqr"]
        + ["http://www.w3.org/1999/02/22-rdf-syntax-ns#type"]
    )
    reference = read_nquads(written, predicates=wanted)
    got = staged_quads(written, wanted)
    assert got.num_rows == reference.num_rows > 100
    for name in got.column_names:
        assert got.column(name).combine_chunks().equals(reference.column(name).combine_chunks())


@pytest.mark.parametrize("seed", [1, 2, 3, 4, 5, 6])
def test_triples_cut_with_numpy_read_what_the_term_reader_reads(seed):
    quads = ox.parse(random_dump(seed).encode(), format=ox.RdfFormat.N_QUADS)
    triples = [ox.Quad(q.subject, q.predicate, q.object) for q in quads]  # default graph
    written = ox.serialize(triples, format=ox.RdfFormat.N_QUADS)
    wanted = pa.array([f"http://example.org/{p}" for p in "pr"] + [RDF_TYPE])
    reference = read_nquads(written, predicates=wanted)
    got = fast_triples(written, wanted)
    assert got is not None and got.num_rows == reference.num_rows > 100
    for name in got.column_names:
        assert got.column(name).combine_chunks().equals(reference.column(name).combine_chunks())
    assert staged_quads(written, wanted, graphs=False).equals(got)


@pytest.mark.parametrize(
    "lines",
    [
        b"<urn:a> <urn:p> <urn:o> <urn:g> .\n",
        b'<urn:a> <urn:p> "o" _:g .\n',
        b"<urn:a> <urn:p> <<( <urn:s> <urn:p> <urn:o> )>> .\n",
        b"\n",
        b"<urn:a> <urn:p> <urn:o> .",
    ],
)
def test_lines_of_another_shape_go_to_the_general_reader(lines):
    good = b'<urn:a> <urn:p> "x y"@en .\n'
    assert fast_triples(good + lines, pa.array(["urn:p"])) is None


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_blocks_staged_as_written_are_what_the_writer_writes(seed):
    """A block that skips the writer (``written_as_is`` and ``fast_triples`` accept it) is
    byte for byte what the writer writes; others (upper-case tags, double spaces) are
    different or hold escapes, which are always rewritten."""
    rng = random.Random(seed)
    quads = ox.parse(random_dump(seed, 40).encode(), format=ox.RdfFormat.N_QUADS)
    triples = [ox.Quad(q.subject, q.predicate, q.object) for q in quads]
    lines = ox.serialize(triples, format=ox.RdfFormat.N_TRIPLES).decode().splitlines(True)
    wanted = pa.array([f"http://example.org/{p}" for p in "pqr"] + [RDF_TYPE])
    skipped = 0
    for start in range(0, len(lines), 3):
        block = "".join(lines[start : start + 3])
        block = block.replace("@en", "@EN") if rng.random() < 0.3 else block
        block = block.replace(" .", "  .") if rng.random() < 0.1 else block
        canonical = ox.serialize(
            ox.parse(block.encode(), format=ox.RdfFormat.N_TRIPLES), format=ox.RdfFormat.N_QUADS
        )
        if written_as_is(block.encode()) and fast_triples(block.encode(), wanted) is not None:
            skipped += 1
            assert block.encode() == canonical
        else:
            changed = block.encode() != canonical
            assert changed or "\\" in block or "XMLSchema#string>" in block  # escapes: rewritten
    assert skipped > 10


def test_line_blocks_cut_between_lines_and_count_them():
    data = b"".join(b"line %d%s\n" % (i, b"x" * (i % 7) * 50) for i in range(200))
    blocks = list(line_blocks(io.BytesIO(data + b"last, no newline"), 64))
    assert b"".join(b for b, _ in blocks) == data + b"last, no newline"
    assert all(b.endswith(b"\n") for b, _ in blocks[:-1])
    for block, first in blocks:
        assert block.startswith(b"line %d" % (first - 1)) or block == b"last, no newline"


@pytest.mark.parametrize("config", CONFIGS[:3])
def test_workers_stage_what_one_stream_stages(tmp_path, monkeypatch, config):
    (tmp_path / "dump.nq").write_text(random_dump(8), encoding="utf-8")
    one = table_hashes(pull_snapshot(differential_spec(tmp_path, "rdf-file", "one", **config)))
    monkeypatch.setattr(_lines, "PROCESSES_FROM", 0)
    monkeypatch.setattr(_lines, "BLOCK_BYTES", 500)
    spec = differential_spec(tmp_path, "rdf-file", "two", **config)
    assert table_hashes(pull_snapshot(spec)) == one
    store = differential_spec(tmp_path, "rdf-store", "store", **config)
    assert table_hashes(pull_snapshot(store)) == one
    assert not list((tmp_path / "two").glob(".graphmill-*"))  # scratch removed


@pytest.mark.parametrize(
    "name",
    ["nt-syntax-bad-esc-01", "nt-syntax-bad-lang-01", "nt-syntax-bad-string-05",
     "nt-syntax-bad-struct-02", "nt-syntax-bad-uri-04", "graphmill-bad-utf8"],
)  # fmt: skip
def test_a_bad_line_in_a_later_block_is_named_in_the_whole_file(tmp_path, workers, name):
    good = 25  # lines before the case: its bad line falls in a later block
    path = tmp_path / f"{name}.nt"
    path.write_bytes(GOOD.encode() * good + (CASES / path.name).read_bytes())
    spec = rdf_spec(tmp_path, "rdf-file", [path.name], {"node": {"match": f"<{NODE}>"}})
    with pytest.raises(InputError) as caught:
        pull_snapshot(spec)
    assert (caught.value.file, caught.value.line) == (path.name, good + BAD[name])
    assert caught.value.one_line().startswith(f"{path.name}:{good + BAD[name]}: not valid")
    assert not spec.output.snapshot.exists()


def _dotless_at_block_end(count: int = 30) -> tuple[bytes, int]:
    """A dump whose line lacking its dot is the last line of a 300-byte block; its number."""
    for index in range(2, count):
        lines = [GOOD] * count
        lines[index] = GOOD.replace(" .\n", "\n")
        data = "".join(lines).encode()
        for block, first in line_blocks(io.BytesIO(data), 300):
            if first + block.count(b"\n") - 1 == index + 1:  # the block ends with it
                return data, index + 1
    raise AssertionError("no such layout")


def test_a_missing_dot_at_the_end_of_a_block_names_its_line(tmp_path, workers):
    data, line = _dotless_at_block_end()
    (tmp_path / "dump.nt").write_bytes(data)
    spec = rdf_spec(tmp_path, "rdf-file", ["dump.nt"], {"node": {"match": f"<{NODE}>"}})
    with pytest.raises(InputError) as caught:
        pull_snapshot(spec)
    assert caught.value.line == line
    assert "dot" in caught.value.one_line()


def test_a_truncated_archive_is_refused_by_the_reading_process(tmp_path, workers):
    data = GOOD.encode() * 400
    packed = gzip.compress(data, mtime=0)
    (tmp_path / "dump.nt.gz").write_bytes(packed[: len(packed) // 2])
    spec = rdf_spec(tmp_path, "rdf-file", ["dump.nt.gz"], {"node": {"match": f"<{NODE}>"}})
    with pytest.raises(InputError) as caught:
        pull_snapshot(spec)
    assert caught.value.file == "dump.nt.gz" and "truncated or damaged" in caught.value.one_line()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["dump.nt.gz"]


def test_a_compressed_dump_through_workers_reads_as_the_plain_one(tmp_path, workers):
    (tmp_path / "dump.nq").write_text(random_dump(9), encoding="utf-8")
    packed = gzip.compress((tmp_path / "dump.nq").read_bytes(), mtime=0)
    (tmp_path / "dump.nq.gz").write_bytes(packed)
    plain = differential_spec(tmp_path, "rdf-file", "plain")
    document = dict(plain.raw)
    document["source"] = {**document["source"], "paths": ["dump.nq.gz"]}
    document["output"] = {"bundle": str(tmp_path / "packed" / "bundle")}
    packed_spec = spec_from_dict(document, base_dir=tmp_path)
    assert table_hashes(pull_snapshot(packed_spec)) == table_hashes(pull_snapshot(plain))


def test_the_dump_is_hashed_while_it_is_read(tmp_path, workers, monkeypatch):
    packed = gzip.compress(random_dump(10).encode(), mtime=0)
    (tmp_path / "dump.nq.gz").write_bytes(packed)
    spec = rdf_spec(tmp_path, "rdf-file", ["dump.nq.gz"], {"node": {"match": f"<{NODE}>"}})
    source = open_source(spec)
    with source:
        monkeypatch.setattr(_fingerprints, "sha256_file", lambda path: pytest.fail("read again"))
        printed = source.fingerprint(source.plan()[0])["files"][0]["sha256"]
        published = source.provenance().details["files"][0]["sha256"]
    assert printed == published == hashlib.sha256(packed).hexdigest()  # of the file as stored
