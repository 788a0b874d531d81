"""Compressed dumps: every kind reads the same graph as the plain file; broken ones are refused.

Archives are made here with the standard library's gzip, bz2 and lzma modules and the
``zstandard`` package (the reference implementations of the formats: RFC 1952, bzip2 1.0,
the .xz file format 1.0.4, RFC 8878), and checked against the uncompressed file.
"""

from __future__ import annotations

import bz2
import gzip
import lzma
import shutil
from pathlib import Path

import pyoxigraph as ox
import pytest
import zstandard
from rdfsource_helpers import pull_snapshot, rdf_spec, table_hashes

from graphmill.connectors.rdf._archives import ArchiveError, open_archive
from graphmill.errors import InputError

DATA = Path(__file__).resolve().parents[2] / "data" / "rdf" / "people.trig"
PERSON = {
    "match": "ex:Person",
    "properties": {"name": {"from": "ex:name", "multi": True}, "age": {"from": "ex:age"}},
}
RELATIONS = [{"from": "Person", "name": "knows", "to": "Person", "match": "ex:knows"}]


def _zstd(data: bytes) -> bytes:
    return zstandard.ZstdCompressor(write_checksum=True).compress(data)


COMPRESS = {
    ".gz": lambda data: gzip.compress(data, mtime=0),
    ".bz2": bz2.compress,
    ".xz": lzma.compress,
    ".zst": _zstd,
}
FORMATS = {".nt": "N_TRIPLES", ".nq": "N_QUADS", ".ttl": "TURTLE"}


def _graph(fmt: str) -> bytes:
    quads = [q for q in ox.parse(path=str(DATA)) if q.graph_name == ox.DefaultGraph()]
    if fmt == "N_QUADS":
        return ox.serialize(quads, format=ox.RdfFormat.N_QUADS)
    return ox.serialize((q.triple for q in quads), format=getattr(ox.RdfFormat, fmt))


def _spec(root: Path, kind: str, name: str, out: str):
    return rdf_spec(root, kind, [name], {"Person": PERSON}, RELATIONS, out=out)


def _big_dump(lines: int = 3000) -> bytes:
    return b"".join(
        b'<http://example.org/p%d> <http://example.org/name> "person %d" .\n' % (i, i)
        for i in range(lines)
    )


@pytest.mark.parametrize("suffix", list(COMPRESS))
@pytest.mark.parametrize("extension", list(FORMATS))
def test_compressed_dump_reads_as_the_plain_one(tmp_path, kind, suffix, extension):
    data = _graph(FORMATS[extension])
    (tmp_path / f"people{extension}").write_bytes(data)
    (tmp_path / f"people{extension}{suffix}").write_bytes(COMPRESS[suffix](data))
    plain = pull_snapshot(_spec(tmp_path, kind, f"people{extension}", "plain"))
    packed = pull_snapshot(_spec(tmp_path, kind, f"people{extension}{suffix}", "packed"))
    assert table_hashes(packed) == table_hashes(plain)
    assert plain.vertices("Person").num_rows == 3  # alice, bob, _:carol (test_exact_tables)
    assert packed.document["source"]["details"]["files"][0]["path"] == f"people{extension}{suffix}"


def test_multi_frame_zstd_is_read_whole(tmp_path):
    data = _big_dump()
    half = len(data) // 2
    path = tmp_path / "dump.nt.zst"
    path.write_bytes(_zstd(data[:half]) + _zstd(data[half:]))
    with open_archive(path, "zstd") as handle:
        assert handle.read() == data


def _truncated(suffix: str) -> bytes:
    packed = COMPRESS[suffix](_big_dump())
    return packed[: len(packed) // 2]


def _corrupt(suffix: str) -> bytes:
    packed = bytearray(COMPRESS[suffix](_big_dump()))
    middle = len(packed) // 2
    packed[middle : middle + 16] = bytes(16)
    return bytes(packed)


@pytest.mark.parametrize("suffix", list(COMPRESS))
@pytest.mark.parametrize("damage", [_truncated, _corrupt], ids=["truncated", "corrupt"])
def test_broken_archive_is_an_input_error_naming_the_file(tmp_path, kind, suffix, damage):
    name = f"dump.nt{suffix}"
    (tmp_path / name).write_bytes(damage(suffix))
    spec = _spec(tmp_path, kind, name, "out")
    with pytest.raises(InputError) as caught:
        pull_snapshot(spec)
    assert caught.value.file == name
    assert caught.value.exit_code == 2
    assert "truncated or damaged" in caught.value.one_line()
    assert not spec.output.snapshot.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == [name]  # no work folder left


@pytest.mark.parametrize("suffix", list(COMPRESS))
def test_archive_reader_refuses_a_truncated_stream(tmp_path, suffix):
    path = tmp_path / f"dump.nt{suffix}"
    path.write_bytes(_truncated(suffix))
    compression = {".gz": "gzip", ".bz2": "bzip2", ".xz": "xz", ".zst": "zstd"}[suffix]
    with pytest.raises(ArchiveError), open_archive(path, compression) as handle:
        shutil.copyfileobj(handle, open(tmp_path / "out", "wb"))  # noqa: SIM115
