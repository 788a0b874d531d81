"""Benchmark: the dataset card (``card_html``) of one bundle, from one or more checkouts.

Each run is a fresh Python process that imports graphmill from one checkout (``--code``),
reads the bundle's manifest, then times ``card_html``: wall and CPU seconds, the peak RSS
above the RSS it started from (sampled from ``/proc/self/status`` every 5 ms in a thread)
and the process's ``VmHWM``. Runs of the checkouts are interleaved (``--repeat`` rounds), so
a busy machine slows them alike; the sha256 of every card is printed beside that of the
bundle's own ``card.html``, to show they match.

Usage (from the repo root; a bundle from ``bench_engine.py --keep``)::

    .venv/bin/python bench/bench_card.py BUNDLE --code OLD_CHECKOUT --code . --repeat 3

Figures are printed, never asserted: this is a measurement, not a test.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import subprocess
import sys
from pathlib import Path

CHILD = r"""
import hashlib, json, sys, threading, time
from pathlib import Path
sys.path.insert(0, sys.argv[1])
from graphmill.bundle import read_manifest
from graphmill.card import card_html

def rss(key="VmRSS"):
    for line in open("/proc/self/status"):
        if line.startswith(key + ":"):
            return int(line.split()[1]) * 1024
    return 0

root = Path(sys.argv[2])
manifest = read_manifest(root, verify=False)
# what seal_with_card gives it: no self-hash, the card not yet among the files
manifest = {k: v for k, v in manifest.items() if k != "manifest_sha256"}
manifest["files"] = [f for f in manifest["files"] if f["path"] != "card.html"]
start, peak, done = rss(), [0], threading.Event()

def sample():
    while not done.is_set():
        peak[0] = max(peak[0], rss())
        time.sleep(0.005)

thread = threading.Thread(target=sample, daemon=True)
thread.start()
wall, cpu = time.perf_counter(), time.process_time()
html = card_html(root, manifest)
wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
done.set()
thread.join()
print(json.dumps({"wall": wall, "cpu": cpu, "above": max(peak[0], rss()) - start,
                  "hwm": rss("VmHWM"), "sha256": hashlib.sha256(html.encode()).hexdigest()}))
"""


def run_once(code: Path, bundle: Path) -> dict[str, float | str]:
    """One fresh process: the card of ``bundle`` with graphmill imported from ``code``."""
    done = subprocess.run(
        [sys.executable, "-c", CHILD, str(code), str(bundle)],
        capture_output=True,
        text=True,
        check=True,
    )
    result: dict[str, float | str] = json.loads(done.stdout.splitlines()[-1])
    return result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("bundle", type=Path)
    parser.add_argument("--code", type=Path, action="append", required=True)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    stored = hashlib.sha256((args.bundle / "card.html").read_bytes()).hexdigest()
    print(f"the bundle's card.html: {stored[:16]}")
    print(f"{'checkout':<28}{'wall s':>8}{'CPU s':>8}{'peak above start':>18}{'VmHWM':>10}  sha256")
    for _ in range(args.repeat):
        for code in args.code:
            r = run_once(code.resolve(), args.bundle)
            load = Path("/proc/loadavg").read_text().split()[0]
            print(
                f"{code!s:<28}{r['wall']:>8.2f}{r['cpu']:>8.2f}"
                f"{float(r['above']) / 2**20:>14,.0f} MiB{float(r['hwm']) / 2**20:>6,.0f} MiB"
                f"  {str(r['sha256'])[:16]}  (load average {load})"
            )


if __name__ == "__main__":
    main()
