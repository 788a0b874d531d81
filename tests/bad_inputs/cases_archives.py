"""Compressed RDF dumps that are truncated or damaged, for both file-reading RDF sources."""

from __future__ import annotations

import bz2
import gzip
import lzma

import zstandard

from tests.bad_inputs._corpus import Case, spec_argv

_DUMP = b"".join(
    b"<http://example.org/p%d> <http://www.w3.org/1999/02/22-rdf-syntax-ns#type> "
    b"<http://example.org/Person> .\n" % i
    for i in range(3000)
)
_PACK = {
    "gz": lambda data: gzip.compress(data, mtime=0),
    "bz2": bz2.compress,
    "xz": lzma.compress,
    "zst": lambda data: zstandard.ZstdCompressor(write_checksum=True).compress(data),
}


def _spec(kind: str, name: str) -> str:
    return (
        "spec_version: 1\n"
        f"source: {{kind: {kind}, paths: [{name}]}}\n"
        "rdf: {prefixes: {ex: 'http://example.org/'}}\n"
        "vertex_types:\n"
        "  person: {match: 'ex:Person'}\n"
        "output: {bundle: out/bundle}\n"
    )


def _damaged(packed: bytes, how: str) -> bytes:
    if how == "truncated":
        return packed[: len(packed) // 2]
    middle = len(packed) // 2
    return packed[:middle] + bytes(16) + packed[middle + 16 :]


CASES = [
    Case(
        name=f"archive-{suffix}-{how}-{kind}",
        category="archives",
        files={
            "spec.yaml": _spec(kind, f"dump.nt.{suffix}"),
            f"dump.nt.{suffix}": _damaged(pack(_DUMP), how),
        },
        argv=spec_argv("pull"),
        exit_code=2,
        where=f"dump.nt.{suffix}",
        says="truncated or damaged",
    )
    for suffix, pack in _PACK.items()
    for how in ("truncated", "corrupt")
    for kind in ("rdf-file", "rdf-store")
]
