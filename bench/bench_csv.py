"""CSV typing: a table-files pull of one CSV vertex file with a column of every kind.

Prints rows/s of the pull (header check, quote count, Arrow's reader, kind detection and
parsing, staging) against the floor of Arrow reading the same file as text, and the time of
the checks that only run when the file is odd (a defect located by line).
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.csv as pacsv

from graphmill.connectors import open_source
from graphmill.connectors._csv import locate_defect
from graphmill.snapshot import pull
from graphmill.spec import spec_from_dict

KINDS = ("integer", "float", "boolean", "date", "datetime", "string")


def write_csv(path: Path, rows: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    days = rng.integers(0, 20_000, rows).astype("datetime64[D]")
    seconds = rng.integers(0, 2_000_000_000, rows).astype("datetime64[s]")
    table = pa.table(
        {
            "ref": pa.array([f"v{i}" for i in range(rows)]),
            "integer": pa.array(rng.integers(-(10**12), 10**12, rows)).cast(pa.string()),
            "float": pa.array(rng.normal(size=rows)).cast(pa.string()),
            "boolean": pa.array(rng.integers(0, 2, rows).astype(bool)).cast(pa.string()),
            "date": pa.array(days.astype(str)),
            "datetime": pa.array(np.char.add(seconds.astype(str), "Z")),
            "string": pa.array(rng.choice(["red", "green", "blue, or not"], rows)),
        }
    )
    pacsv.write_csv(table, path)


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--seed", type=int, default=20261202)
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        write_csv(root / "v.csv", args.rows, args.seed)
        size = (root / "v.csv").stat().st_size
        spec = spec_from_dict(
            {
                "spec_version": 1,
                "source": {
                    "kind": "table-files",
                    "vertex_files": [{"path": "v.csv", "id_column": "ref", "type": "thing"}],
                },
                "vertex_types": {"thing": {"properties": {k: {"kind": k} for k in KINDS}}},
                "relations": [],
                "output": {"bundle": "out/b"},
            },
            base_dir=root,
        )
        started = time.perf_counter()
        names = ["ref", *KINDS]
        pacsv.read_csv(
            root / "v.csv",
            convert_options=pacsv.ConvertOptions(column_types=dict.fromkeys(names, pa.string())),
        )
        floor = time.perf_counter() - started
        started = time.perf_counter()
        pull(spec, open_source(spec))
        seconds = time.perf_counter() - started
        started = time.perf_counter()
        assert locate_defect(root / "v.csv", ",") is None
        scan = time.perf_counter() - started
    print(f"rows {args.rows:,}, file {size / 2**20:.1f} MiB")
    print(f"floor: Arrow reads every column as text   {floor:6.2f} s")
    print(
        f"graphmill pull (typed, staged)            {seconds:6.2f} s"
        f"  {args.rows / seconds:,.0f} rows/s"
    )
    print(f"  ratio to floor                          {seconds / floor:6.1f}x")
    print(f"defect scan (only run on a bad file)      {scan:6.2f} s")


if __name__ == "__main__":
    main()
