"""Progress of long parses and loads: MiB of the file read, quads read, rate."""

from __future__ import annotations

import gzip

import pytest
from rdfsource_helpers import rdf_spec

from graphmill.pipeline import Pipeline

LINES = 30_000  # about 2.6 MiB of N-Triples


class Recorded:
    """A progress task that remembers what it was told."""

    def __init__(self, description: str, total: int | None) -> None:
        self.descriptions, self.total, self.done = [description], total, 0

    def advance(self, amount: int = 1) -> None:
        self.done += amount

    def describe(self, description: str) -> None:
        self.descriptions.append(description)


class Recorder:
    def __init__(self) -> None:
        self.tasks: list[Recorded] = []

    def task(self, description: str, total: int | None = None) -> Recorded:
        self.tasks.append(Recorded(description, total))
        return self.tasks[-1]


def _dump() -> bytes:
    return b"".join(
        b"<http://example.org/p%d> <http://www.w3.org/1999/02/22-rdf-syntax-ns#type> "
        b"<http://example.org/Person> .\n" % i
        for i in range(LINES)
    )


@pytest.mark.parametrize("name", ["dump.nt", "dump.nt.gz"])
def test_reading_reports_mib_and_quads(tmp_path, kind, name):
    data = _dump()
    (tmp_path / name).write_bytes(gzip.compress(data) if name.endswith(".gz") else data)
    spec = rdf_spec(tmp_path, kind, [name], {"person": {"match": "ex:Person"}})
    recorder = Recorder()
    Pipeline(spec, progress=recorder).pull()
    verb = "read" if kind == "rdf-file" else "load"
    [task] = [t for t in recorder.tasks if t.descriptions[0].startswith(f"{verb} {name}")]
    size = (tmp_path / name).stat().st_size
    assert task.total == -(-size // 2**20)  # MiB of the file as stored, rounded up
    assert task.done == size // 2**20  # whole MiB read by the end
    assert task.descriptions[-1].startswith(f"{verb} {name} (MiB): {LINES:,} quads, ")
    assert task.descriptions[-1].endswith("/s")
