"""The lending cooperative a week later: a second dump derived from the first.

Changes, all invented: ``added`` new members (each a copy of a random existing member's
properties, with two transfers to existing members), a share ``removed`` of the transfers
(``sends_money``) gone, and every balance multiplied by ``balance_factor`` (a drifted
feature). Run ``python next_week.py DUMP OUT_DIR`` or call :func:`next_week`.
"""

from __future__ import annotations

import random
import sys
from pathlib import Path

NS = "http://coop.example/"
SENDS = f"<{NS}sends_money>"
BALANCE = f"<{NS}balance>"


def next_week(
    dump: Path,
    out_dir: Path,
    *,
    added: int = 240,
    removed: float = 0.1,
    balance_factor: float = 1.6,
    seed: int = 2,
) -> Path:
    """Write ``out_dir/coop.nt``, the week-2 dump; return its path."""
    rng = random.Random(seed)
    lines = dump.read_text(encoding="utf-8").splitlines()
    members = sorted({ln.split(" ", 1)[0] for ln in lines if ln.startswith(f"<{NS}member/")})
    by_member: dict[str, list[str]] = {}
    out = []
    for line in lines:
        subject, predicate, rest = line.split(" ", 2)
        if predicate == SENDS and rng.random() < removed:
            continue
        if predicate == BALANCE:
            value, datatype = rest.split('"')[1], rest.split("^^", 1)[1]
            rest = f'"{float(value) * balance_factor:.2f}"^^{datatype}'
            line = f"{subject} {predicate} {rest}"
        if predicate != SENDS and subject.startswith(f"<{NS}member/"):
            by_member.setdefault(subject, []).append(line)
        out.append(line)
    for i in range(added):
        new = f"<{NS}member/m{len(members) + i:05d}>"
        template = rng.choice(members)
        out += [new + line[len(template) :] for line in by_member.get(template, [])]
        out += [f"{new} {SENDS} {rng.choice(members)} ." for _ in range(2)]
    path = out_dir / "coop.nt"
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("\n".join(out) + "\n", encoding="utf-8")
    return path


if __name__ == "__main__":
    print(next_week(Path(sys.argv[1]), Path(sys.argv[2])))
