"""A fictional lending cooperative as an RDF dump (N-Triples), generated deterministically.

Members use devices, pay merchants, send money to each other and co-sign each other's loans
(``co_signs`` is declared undirected; each co-signing is stated from both sides). A manual
review flagged some members (``flagged``, xsd:boolean) and cleared others; members that were
never reviewed carry no flag. Fraudsters come in rings: they share devices, send money and
co-sign inside the ring, joined recently, are younger and less often verified, so the flag
can be learned from structure and features.

The dump plants a few defects so that ``graphmill check`` has something to show; their exact
counts are in :data:`DEFECTS` and in the :class:`CoopCounts` that :func:`generate` returns.

Run ``python examples/lending_coop/generate.py [OUT_DIR]``; the same seed always writes the
same bytes.
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
    """``<NS kind/k000042>`` for each index (vectorized)."""
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


def rings(rng: np.random.Generator, fraud: np.ndarray) -> list[np.ndarray]:
    """Split the fraudsters into rings of 4 to 8 members."""
    sizes = rng.integers(4, 9, size=len(fraud))
    cuts = np.cumsum(sizes)
    cuts = cuts[cuts < len(fraud)]
    return np.split(fraud, cuts)


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
    """Write ``out_dir/coop.nt`` and return what it holds."""
    rng = np.random.default_rng(seed)
    m = np.arange(members)
    isolated = members - 1  # no edge of any kind; never a fraudster
    fraud_idx = np.sort(rng.choice(members - 1, size=int(members * fraud_rate), replace=False))
    is_fraud = np.zeros(members, dtype=bool)
    is_fraud[fraud_idx] = True
    ring_list = rings(rng, fraud_idx)
    out: list[np.ndarray] = []
    mem, dev, mer = (
        iri("member", m),
        iri("device", np.arange(devices)),
        iri("merchant", np.arange(merchants)),
    )
    type_line = f" {RDF_TYPE} <{NS}"
    out.append(np.char.add(mem, type_line + "Member> ."))
    out.append(np.char.add(dev, type_line + "Device> ."))
    out.append(np.char.add(mer, type_line + "Merchant> ."))

    # --- member properties: features that differ between honest members and fraudsters
    age = np.where(is_fraud, rng.normal(26, 5, members), rng.normal(43, 13, members))
    age = np.clip(np.rint(age), 18, 90).astype(np.int64)
    age_terms = typed(age, "integer")
    age_terms[7] = plain(age[7:8])[0]  # defect: a plain string where an integer belongs
    out.append(lines(mem, "age", age_terms))
    old = rng.integers(START_S, END_S, members)
    new = rng.integers(RECENT_S, END_S, members)
    joined = np.where(is_fraud & (rng.random(members) < 0.85), new, old)
    out.append(lines(mem, "joined", typed(timestamps(joined), "dateTime")))
    verified = rng.random(members) < np.where(is_fraud, 0.3, 0.85)
    out.append(lines(mem, "verified", typed(np.where(verified, "true", "false"), "boolean")))
    balance = np.round(rng.lognormal(np.where(is_fraud, 4.5, 7.0), 1.2), 2)
    out.append(lines(mem, "balance", typed(np.char.mod("%.2f", balance), "decimal")))
    limit = np.round(rng.uniform(500, 20000, members), 1)
    out.append(lines(mem, "credit_limit", typed(np.char.mod("%.1f", limit), "double")))
    segment = SEGMENTS[rng.integers(0, len(SEGMENTS), members)]
    out.append(lines(mem, "segment", plain(segment)))
    branch = BRANCHES[np.minimum(rng.geometric(0.35, members) - 1, len(BRANCHES) - 1)]
    out.append(lines(mem, "branch", plain(branch)))
    n_tags = rng.integers(0, 4, members)
    tag_owner = np.repeat(m, n_tags)
    tag_codes = np.unique(tag_owner * len(TAGS) + rng.integers(0, len(TAGS), len(tag_owner)))
    out.append(lines(mem[tag_codes // len(TAGS)], "tag", plain(TAGS[tag_codes % len(TAGS)])))
    has_motto = rng.random(members) < 0.4
    motto_pick = rng.integers(0, len(MOTTOS_EN), members)[has_motto]
    out.append(lines(mem[has_motto], "motto", plain(MOTTOS_EN[motto_pick], "en")))
    out.append(lines(mem[has_motto], "motto", plain(MOTTOS_FR[motto_pick], "fr")))
    reviewed = (rng.random(members) < reviewed_rate) & (m != isolated)
    flag = np.where(is_fraud, "true", "false")[reviewed]
    out.append(lines(mem[reviewed], "flagged", typed(flag, "boolean")))

    # --- device and merchant properties
    out.append(lines(dev, "platform", plain(PLATFORMS[rng.integers(0, 3, devices)])))
    first_seen = rng.integers(START_S, END_S, devices)
    out.append(lines(dev, "first_seen", typed(timestamps(first_seen), "dateTime")))
    category = CATEGORIES[rng.integers(0, len(CATEGORIES), merchants)]
    out.append(lines(mer, "category", plain(category)))
    risk = np.round(rng.beta(2, 5, merchants), 3)
    out.append(lines(mer, "risk_score", typed(np.char.mod("%.3f", risk), "double")))

    # --- edges. Every relation leaves out the isolated member.
    active = m[m != isolated]
    honest = active[~is_fraud[active]]
    ring_of = np.full(members, -1)
    for r, ring in enumerate(ring_list):  # one step per ring, not per vertex
        ring_of[ring] = r
    ring_sizes = np.array([len(r) for r in ring_list])
    ring_start = np.concatenate([[0], np.cumsum(ring_sizes)[:-1]])
    ring_members = np.concatenate(ring_list)

    def ring_mates(owners: np.ndarray) -> np.ndarray:
        """A random member of each owner's ring (maybe the owner; callers drop self pairs)."""
        r = ring_of[owners]
        return ring_members[ring_start[r] + rng.integers(0, ring_sizes[r])]

    # uses: honest members have their own devices; each ring shares two devices.
    shared = (
        devices - 2 * len(ring_list) + 2 * ring_of[fraud_idx] + rng.integers(0, 2, len(fraud_idx))
    )
    per = rng.integers(1, 3, len(honest))
    u_src = np.concatenate([np.repeat(honest, per), fraud_idx])
    u_dst = np.concatenate([rng.integers(0, devices - 2 * len(ring_list), per.sum()), shared])
    u_src, u_dst = cover(rng, u_src, u_dst, devices, honest)
    u_src, u_dst = distinct_pairs(u_src, u_dst, devices)
    out.append(lines(mem[u_src], "uses", dev[u_dst]))

    # pays: honest members pay everywhere; fraudsters prefer online, gaming and crypto.
    per = rng.integers(2, 8, len(active))
    p_src = np.repeat(active, per)
    risky = np.flatnonzero(np.isin(category, ["online", "gaming", "crypto"]))
    anywhere = rng.integers(0, merchants, len(p_src))
    p_dst = np.where(is_fraud[p_src], risky[rng.integers(0, len(risky), len(p_src))], anywhere)
    p_src, p_dst = cover(rng, p_src, p_dst, merchants, honest)
    p_src, p_dst = distinct_pairs(p_src, p_dst, merchants)
    out.append(lines(mem[p_src], "pays", mer[p_dst]))

    # sends_money: honest members to random others, fraudsters mostly inside their ring.
    per = rng.poisson(np.where(is_fraud[active], 4.0, 1.5))
    s_src = np.repeat(active, per)
    random_dst = active[rng.integers(0, len(active), len(s_src))]
    inside = is_fraud[s_src] & (rng.random(len(s_src)) < 0.8)
    s_dst = random_dst.copy()
    s_dst[inside] = ring_mates(s_src[inside])
    s_src, s_dst = unique_pairs(s_src, s_dst, members)
    send_terms = [lines(mem[s_src], "sends_money", mem[s_dst])]
    ghosts = iri("member", np.array([90001, 90002]))  # defect: dangling transfers
    send_terms.append(lines(mem[[3, 5]], "sends_money", ghosts))
    send_terms.append(lines(mem[[11]], "sends_money", mem[[11]]))  # defect: self-loop
    # A repeated line: RDF graphs are sets of triples (RDF 1.1 Concepts, section 3), so the
    # store keeps one and check reports no repeated edge. Table dumps can hold real repeats.
    send_terms.append(send_terms[0][:1])
    out += send_terms

    # co_signs: undirected, stated from both sides; ring members co-sign each other.
    c_src = np.concatenate([honest[rng.integers(0, len(honest), len(honest) // 4)], fraud_idx])
    c_dst = np.concatenate(
        [active[rng.integers(0, len(active), len(honest) // 4)], ring_mates(fraud_idx)]
    )
    lo, hi = np.minimum(c_src, c_dst), np.maximum(c_src, c_dst)
    lo, hi = unique_pairs(lo, hi, members)
    one_way = 0  # defect: the first pair is stated by its lower member only
    both_src = np.concatenate([lo, hi[one_way + 1 :]])
    both_dst = np.concatenate([hi, lo[one_way + 1 :]])
    out.append(lines(mem[both_src], "co_signs", mem[both_dst]))

    all_lines = np.concatenate(out)
    path = Path(out_dir) / DUMP_NAME
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("\n".join(all_lines.tolist()) + "\n", encoding="utf-8")
    return CoopCounts(
        path=path,
        vertices={"member": members, "device": devices, "merchant": merchants},
        edges={
            "member.uses.device": len(u_src),
            "member.pays.merchant": len(p_src),
            "member.sends_money.member": len(s_src) + 3,
            "member.co_signs.member": len(both_src),
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
