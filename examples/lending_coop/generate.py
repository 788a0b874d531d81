"""A fictional lending cooperative as an RDF dump (N-Triples), generated deterministically.

Members use devices, pay merchants, send money to each other and co-sign each other's loans
(``co_signs`` is declared undirected; each co-signing is stated from both sides). A manual
review flagged some members (``flagged``, xsd:boolean) and cleared others; members that were
never reviewed carry no flag. Fraudsters come in rings: they share devices, send money and
co-sign inside the ring, joined recently, are younger and less often verified, so the flag
can be learned from structure and features.

The dump plants a few defects so that ``graphmill check`` has something to show; their exact
counts are in :data:`DEFECTS` and in the :class:`CoopCounts` that :func:`generate` returns.

Run ``python examples/lending_coop/generate.py [OUT_DIR]`` (default: ``out/lending_coop`` at
the repo root, where the demo spec reads it); the same seed always writes the same bytes.
"""

from __future__ import annotations

import sys
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

NS = "http://coop.example/"
XSD = "http://www.w3.org/2001/XMLSchema#"
RDF_TYPE = "<http://www.w3.org/1999/02/22-rdf-syntax-ns#type>"
DUMP_NAME = "coop.nt"
SEGMENTS = np.array(["retail", "small_business", "student", "senior"])
TAGS = np.array(["saver", "borrower", "homeowner", "freelancer", "pensioner", "volunteer"])
BRANCHES = np.array(["north", "harbour", "old_town", "riverside", "hill", "airport", "mill"])
PLATFORMS = np.array(["android", "ios", "web"])
CATEGORIES = np.array(["grocery", "fuel", "online", "travel", "gaming", "crypto"])
MOTTOS_EN = np.array(["save first", "neighbours help", "slow and steady", "small steps"])
MOTTOS_FR = np.array(["épargner d'abord", "entraide", "pas à pas", "petit à petit"])
#: The planted defects and how many of each the dump holds.
DEFECTS = {
    "dangling_transfers": 2,  # sends_money to members that do not exist
    "self_loop_transfers": 1,  # a member sends money to themselves
    "one_way_co_signs": 1,  # a co-signing stated by one side only
    "isolated_members": 1,  # a member with no edge at all
    "string_ages": 1,  # an age written as a plain string literal
    "repeated_lines": 1,  # a transfer stated twice (one triple in RDF, see below)
}
START_S = np.datetime64("2017-01-01T00:00:00", "s").astype(np.int64)
END_S = np.datetime64("2026-06-30T00:00:00", "s").astype(np.int64)
RECENT_S = np.datetime64("2025-11-01T00:00:00", "s").astype(np.int64)


@dataclass(frozen=True)
class CoopCounts:
    """What was written: vertices per type, edges per relation as a store holds them (the
    repeated line counted once), distinct triples, and the planted defects."""

    path: Path
    vertices: dict[str, int]
    edges: dict[str, int]
    labeled: int
    flagged: int
    triples: int
    defects: dict[str, int] = field(default_factory=lambda: dict(DEFECTS))
    dangling_targets: tuple[str, ...] = ()


def iri(kind: str, index: np.ndarray) -> np.ndarray:
    """``<NS kind/k00042>`` for each index (vectorized)."""
    return np.char.add(
        np.char.add(f"<{NS}{kind}/{kind[0]}", np.char.zfill(index.astype(str), 5)), ">"
    )


def typed(values: np.ndarray, datatype: str) -> np.ndarray:
    return np.char.add(np.char.add('"', values.astype(str)), f'"^^<{XSD}{datatype}>')


def plain(values: np.ndarray, lang: str | None = None) -> np.ndarray:
    text = np.char.replace(np.char.replace(values.astype(str), "\\", "\\\\"), '"', '\\"')
    suffix = f'"@{lang}' if lang else '"'
    return np.char.add(np.char.add('"', text), suffix)


def lines(subjects: np.ndarray, predicate: str, objects: np.ndarray) -> np.ndarray:
    """N-Triples lines for aligned subject and object terms."""
    head = np.char.add(subjects, f" <{NS}{predicate}> ")
    return np.char.add(head, np.char.add(objects, " ."))


def timestamps(seconds: np.ndarray) -> np.ndarray:
    return np.char.add(seconds.astype("datetime64[s]").astype(str), "Z")


def distinct_pairs(src: np.ndarray, dst: np.ndarray, n_dst: int) -> tuple[np.ndarray, np.ndarray]:
    """Distinct (src, dst) pairs, sorted; ``dst`` values lie in ``0..n_dst-1``."""
    codes = np.unique(src.astype(np.int64) * n_dst + dst)
    return codes // n_dst, codes % n_dst


def unique_pairs(src: np.ndarray, dst: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Distinct (src, dst) pairs of one vertex type, without self-loops, sorted."""
    keep = src != dst
    return distinct_pairs(src[keep], dst[keep], n)


def cover(
    rng: np.random.Generator, src: np.ndarray, dst: np.ndarray, n_dst: int, owners: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Add an edge from a random owner to every target no edge reaches (none is isolated)."""
    unused = np.setdiff1d(np.arange(n_dst), dst)
    extra = owners[rng.integers(0, len(owners), len(unused))]
    return np.concatenate([src, extra]), np.concatenate([dst, unused])


@dataclass(frozen=True)
class Rings:
    """Fraud rings: ``of[m]`` is member ``m``'s ring (-1 for honest members); ring ``r``'s
    members are ``members[start[r] : start[r] + sizes[r]]``."""

    of: np.ndarray
    members: np.ndarray
    start: np.ndarray
    sizes: np.ndarray

    @classmethod
    def split(cls, rng: np.random.Generator, fraud: np.ndarray, count: int) -> Rings:
        """Split the fraudsters into rings of 4 to 8 members (the last may be smaller)."""
        cuts = np.cumsum(rng.integers(4, 9, size=len(fraud)))
        cuts = cuts[cuts < len(fraud)]
        sizes = np.diff(np.concatenate([[0], cuts, [len(fraud)]]))
        of = np.full(count, -1)
        of[fraud] = np.repeat(np.arange(len(sizes)), sizes)
        return cls(of, fraud, np.concatenate([[0], cuts]), sizes)

    @property
    def count(self) -> int:
        return len(self.sizes)

    def mates(self, rng: np.random.Generator, owners: np.ndarray) -> np.ndarray:
        """A random member of each owner's ring (maybe the owner: callers drop self pairs)."""
        r = self.of[owners]
        return self.members[self.start[r] + rng.integers(0, self.sizes[r])]


def member_lines(
    rng: np.random.Generator, mem: np.ndarray, is_fraud: np.ndarray, reviewed_rate: float
) -> tuple[list[np.ndarray], np.ndarray]:
    """Property lines of the members (features that differ between honest members and
    fraudsters) and the mask of reviewed (labelled) members."""
    n = len(mem)
    age = np.where(is_fraud, rng.normal(26, 5, n), rng.normal(43, 13, n))
    age = np.clip(np.rint(age), 18, 90).astype(np.int64)
    age_terms = typed(age, "integer")
    age_terms[7] = plain(age[7:8])[0]  # defect: a plain string where an integer belongs
    old, new = rng.integers(START_S, END_S, n), rng.integers(RECENT_S, END_S, n)
    joined = np.where(is_fraud & (rng.random(n) < 0.85), new, old)
    verified = rng.random(n) < np.where(is_fraud, 0.3, 0.85)
    balance = np.round(rng.lognormal(np.where(is_fraud, 4.5, 7.0), 1.2), 2)
    limit = np.round(rng.uniform(500, 20000, n), 1)
    segment = SEGMENTS[rng.integers(0, len(SEGMENTS), n)]
    branch = BRANCHES[np.minimum(rng.geometric(0.35, n) - 1, len(BRANCHES) - 1)]
    out = [
        lines(mem, "age", age_terms),
        lines(mem, "joined", typed(timestamps(joined), "dateTime")),
        lines(mem, "verified", typed(np.where(verified, "true", "false"), "boolean")),
        lines(mem, "balance", typed(np.char.mod("%.2f", balance), "decimal")),
        lines(mem, "credit_limit", typed(np.char.mod("%.1f", limit), "double")),
        lines(mem, "segment", plain(segment)),
        lines(mem, "branch", plain(branch)),
    ]
    owner = np.repeat(np.arange(n), rng.integers(0, 4, n))
    tags = np.unique(owner * len(TAGS) + rng.integers(0, len(TAGS), len(owner)))
    out.append(lines(mem[tags // len(TAGS)], "tag", plain(TAGS[tags % len(TAGS)])))
    has_motto = rng.random(n) < 0.4
    motto = rng.integers(0, len(MOTTOS_EN), n)[has_motto]
    out.append(lines(mem[has_motto], "motto", plain(MOTTOS_EN[motto], "en")))
    out.append(lines(mem[has_motto], "motto", plain(MOTTOS_FR[motto], "fr")))
    reviewed = rng.random(n) < reviewed_rate
    reviewed[-1] = False  # the isolated member was never reviewed
    flag = np.where(is_fraud, "true", "false")[reviewed]
    out.append(lines(mem[reviewed], "flagged", typed(flag, "boolean")))
    return out, reviewed


def uses_pairs(
    rng: np.random.Generator, honest: np.ndarray, rings: Rings, devices: int
) -> tuple[np.ndarray, np.ndarray]:
    """Honest members use one or two devices of their own; each ring shares two devices
    (the last ``2 * rings.count``)."""
    own = devices - 2 * rings.count
    fraud = rings.members
    shared = own + 2 * rings.of[fraud] + rng.integers(0, 2, len(fraud))
    per = rng.integers(1, 3, len(honest))
    src = np.concatenate([np.repeat(honest, per), fraud])
    dst = np.concatenate([rng.integers(0, own, per.sum()), shared])
    return distinct_pairs(*cover(rng, src, dst, devices, honest), devices)


def pays_pairs(
    rng: np.random.Generator,
    active: np.ndarray,
    honest: np.ndarray,
    is_fraud: np.ndarray,
    category: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Honest members pay anywhere; fraudsters prefer online, gaming and crypto merchants."""
    src = np.repeat(active, rng.integers(2, 8, len(active)))
    risky = np.flatnonzero(np.isin(category, ["online", "gaming", "crypto"]))
    anywhere = rng.integers(0, len(category), len(src))
    dst = np.where(is_fraud[src], risky[rng.integers(0, len(risky), len(src))], anywhere)
    return distinct_pairs(*cover(rng, src, dst, len(category), honest), len(category))


def sends_pairs(
    rng: np.random.Generator, active: np.ndarray, is_fraud: np.ndarray, rings: Rings
) -> tuple[np.ndarray, np.ndarray]:
    """Honest members send to random others, fraudsters mostly inside their ring."""
    src = np.repeat(active, rng.poisson(np.where(is_fraud[active], 4.0, 1.5)))
    dst = active[rng.integers(0, len(active), len(src))]
    inside = is_fraud[src] & (rng.random(len(src)) < 0.8)
    dst[inside] = rings.mates(rng, src[inside])
    return unique_pairs(src, dst, len(is_fraud))


def co_sign_pairs(
    rng: np.random.Generator, active: np.ndarray, honest: np.ndarray, rings: Rings, count: int
) -> tuple[np.ndarray, np.ndarray]:
    """Distinct unordered pairs (lower, higher): a few among everyone, more inside rings."""
    k = len(honest) // 4
    src = np.concatenate([honest[rng.integers(0, len(honest), k)], rings.members])
    dst = np.concatenate([active[rng.integers(0, len(active), k)], rings.mates(rng, rings.members)])
    return unique_pairs(np.minimum(src, dst), np.maximum(src, dst), count)


def generate(
    out_dir: str | Path,
    *,
    members: int = 3000,
    devices: int = 4000,
    merchants: int = 240,
    fraud_rate: float = 0.2,
    reviewed_rate: float = 0.85,
    seed: int = 20261202,
) -> CoopCounts:
    """Write ``out_dir/coop.nt`` (through a temporary file and a rename) and return what
    it holds. The last member is the isolated one; no fraudster is isolated."""
    rng = np.random.default_rng(seed)
    m = np.arange(members)
    fraud = np.sort(rng.choice(members - 1, size=int(members * fraud_rate), replace=False))
    is_fraud = np.isin(m, fraud)
    rings = Rings.split(rng, fraud, members)
    mem, dev = iri("member", m), iri("device", np.arange(devices))
    mer = iri("merchant", np.arange(merchants))
    type_line = f" {RDF_TYPE} <{NS}"
    out = [
        np.char.add(mem, type_line + "Member> ."),
        np.char.add(dev, type_line + "Device> ."),
        np.char.add(mer, type_line + "Merchant> ."),
    ]
    properties, reviewed = member_lines(rng, mem, is_fraud, reviewed_rate)
    out += properties
    out.append(lines(dev, "platform", plain(PLATFORMS[rng.integers(0, 3, devices)])))
    first_seen = rng.integers(START_S, END_S, devices)
    out.append(lines(dev, "first_seen", typed(timestamps(first_seen), "dateTime")))
    category = CATEGORIES[rng.integers(0, len(CATEGORIES), merchants)]
    out.append(lines(mer, "category", plain(category)))
    risk = np.round(rng.beta(2, 5, merchants), 3)
    out.append(lines(mer, "risk_score", typed(np.char.mod("%.3f", risk), "double")))

    active = m[:-1]  # every relation leaves out the isolated member
    honest = active[~is_fraud[active]]
    u_src, u_dst = uses_pairs(rng, honest, rings, devices)
    out.append(lines(mem[u_src], "uses", dev[u_dst]))
    p_src, p_dst = pays_pairs(rng, active, honest, is_fraud, category)
    out.append(lines(mem[p_src], "pays", mer[p_dst]))
    s_src, s_dst = sends_pairs(rng, active, is_fraud, rings)
    sends = lines(mem[s_src], "sends_money", mem[s_dst])
    ghosts = iri("member", np.array([90001, 90002]))  # defect: dangling transfers
    planted = [
        lines(mem[[3, 5]], "sends_money", ghosts),
        lines(mem[[11]], "sends_money", mem[[11]]),  # defect: a self-loop
        # A repeated line: RDF graphs are sets of triples (RDF 1.1 Concepts, section 3), so
        # the store keeps one and check reports no repeated edge.
        sends[:1],
    ]
    out += [sends, *planted]
    lo, hi = co_sign_pairs(rng, active, honest, rings, members)
    # Each co-signing is stated from both sides, but the first pair (a defect) one way only.
    c_src, c_dst = np.concatenate([lo, hi[1:]]), np.concatenate([hi, lo[1:]])
    out.append(lines(mem[c_src], "co_signs", mem[c_dst]))

    all_lines = np.concatenate(out)
    path = Path(out_dir) / DUMP_NAME
    path.parent.mkdir(parents=True, exist_ok=True)
    scratch = path.with_name(f".{path.name}.writing")
    scratch.write_text("\n".join(all_lines.tolist()) + "\n", encoding="utf-8")
    scratch.replace(path)
    stored_sends = len(s_src) + DEFECTS["dangling_transfers"] + DEFECTS["self_loop_transfers"]
    return CoopCounts(
        path=path,
        vertices={"member": members, "device": devices, "merchant": merchants},
        edges={
            "member.uses.device": len(u_src),
            "member.pays.merchant": len(p_src),
            "member.sends_money.member": stored_sends,
            "member.co_signs.member": len(c_src),
        },
        labeled=int(reviewed.sum()),
        flagged=int((reviewed & is_fraud).sum()),
        triples=len(all_lines) - DEFECTS["repeated_lines"],
        dangling_targets=tuple(t.strip("<>") for t in ghosts),
    )


def main(argv: list[str] | None = None) -> None:
    args = sys.argv[1:] if argv is None else argv
    out = Path(args[0]) if args else Path(__file__).resolve().parents[2] / "out" / "lending_coop"
    counts = generate(out)
    print(f"wrote {counts.triples:,} distinct triples to {counts.path}")


if __name__ == "__main__":
    main()
