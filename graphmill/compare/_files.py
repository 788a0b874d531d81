"""The files of one side of a comparison, each read at most once and (with ``verify``) each
checked against its recorded sha256 while the comparison runs.

A table the comparison needs is read into memory once; its bytes are hashed on a worker
thread (``hashlib`` releases the GIL) while pyarrow parses the same buffer, so the bytes
compared are the bytes verified. Files the comparison never reads (tensors, features, the
card) are hashed from disk on the workers from the start. :meth:`SideFiles.settle` waits for
every hash and raises :class:`BundleIntegrityError` naming the first file that differs; a
comparison publishes nothing before both sides have settled.
"""

from __future__ import annotations

import hashlib
import mmap
import os
from collections.abc import Iterable
from concurrent.futures import Future, ThreadPoolExecutor
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

from graphmill.errors import BundleIntegrityError

HASH_WORKERS = 2


def _digest(buffer: pa.Buffer) -> str:
    return hashlib.sha256(memoryview(buffer)).hexdigest()  # one call: the GIL is released


def _file_digest(path: Path) -> str:
    """sha256 of a file the comparison does not parse: mapped, hashed in one call (no copy
    into Python; the GIL is released)."""
    with open(path, "rb") as fh:
        if os.fstat(fh.fileno()).st_size == 0:
            return hashlib.sha256(b"").hexdigest()
        with mmap.mmap(fh.fileno(), 0, access=mmap.ACCESS_READ) as mapped:
            return hashlib.sha256(mapped).hexdigest()


class SideFiles:
    """Reads of one bundle's (or snapshot's) files. ``expected`` maps each relative path to
    its (size in bytes or None when not recorded, sha256); with ``verify=False`` nothing is
    hashed."""

    def __init__(
        self,
        root: Path,
        expected: dict[str, tuple[int | None, str]],
        *,
        verify: bool,
        pool: ThreadPoolExecutor | None = None,
        hint: str = "the bundle was altered or damaged; build it again",
        what: str = "the manifest",
    ) -> None:
        self.root = root
        self.expected = expected
        self.verify = verify
        self._pool = pool
        self._hint, self._what = hint, what
        self._hashes: dict[str, Future[str]] = {}
        if verify:
            for rel, (size, _) in expected.items():  # cheap: a missing file fails at once
                path = root / rel
                if not path.is_file() or size not in (None, path.stat().st_size):
                    self._fail(rel)

    def _fail(self, rel: str) -> None:
        raise BundleIntegrityError(
            f"file is missing or its sha256 differs from {self._what}",
            file=str(self.root / rel),
            hint=self._hint,
        )

    def _submit(self, rel: str, job: object, *args: object) -> None:
        if not self.verify or rel in self._hashes or rel not in self.expected:
            return
        if self._pool is None:
            self._pool = ThreadPoolExecutor(HASH_WORKERS, thread_name_prefix="gm-sha256")
        self._hashes[rel] = self._pool.submit(job, *args)  # type: ignore[arg-type]

    def hash_unread(self, skip: Iterable[str]) -> None:
        """Start hashing, from disk, every expected file outside the ``skip`` prefixes."""
        prefixes = tuple(skip)
        for rel in self.expected:
            if not rel.startswith(prefixes):
                self._submit(rel, _file_digest, self.root / rel)

    def buffer(self, rel: str) -> pa.Buffer:
        """The file's bytes; hashing them starts as soon as they are read (the comparison
        reads each file once, so nothing is cached)."""
        with pa.OSFile(str(self.root / rel)) as fh:
            found = fh.read_buffer()
        self._submit(rel, _digest, found)
        return found

    def schema(self, rel: str) -> pa.Schema:
        return pq.read_schema(pa.BufferReader(self.buffer(rel)))

    def table(self, rel: str, columns: list[str] | None = None) -> pa.Table:
        return pq.read_table(pa.BufferReader(self.buffer(rel)), columns=columns)

    def settle(self) -> None:
        """Hash whatever was not hashed yet, wait for every hash, and raise
        :class:`BundleIntegrityError` for the first file (in listing order) that differs."""
        if not self.verify:
            return
        for rel in self.expected:
            self._submit(rel, _file_digest, self.root / rel)
        try:
            for rel, (_, digest) in self.expected.items():
                if self._hashes[rel].result() != digest:
                    self._fail(rel)
        finally:
            self._hashes.clear()


def shared_pool() -> ThreadPoolExecutor:
    """The hashing workers two sides share for one comparison."""
    return ThreadPoolExecutor(HASH_WORKERS, thread_name_prefix="gm-sha256")
