"""Key ranges cover every subject exactly once, whatever the sample and the string order.

The server side is simulated with the SPARQL semantics of the range filter: ``isIRI(?k) &&
STR(?k) >= low && STR(?k) < high`` (SPARQL 1.1 Query, section 17.3: simple literals compare
with ``fn:compare``, i.e. by code point) -- and, because Jena compares Java strings, also by
UTF-16 code unit, which orders characters beyond U+FFFF differently.
"""

from __future__ import annotations

import pyarrow as pa
from hypothesis import given, settings
from hypothesis import strategies as st

from graphmill.connectors.rdf._queries import KeyRange
from graphmill.connectors.sparql._ranges import KeySampler, RangeCursor, RangePlanner


def _utf16(text: str) -> bytes:
    return text.encode("utf-16-be")


def _in(key: str, kind: str, key_range: KeyRange, order) -> bool:
    if key_range.blank_nodes:
        return kind == "blank"
    if kind != "iri":
        return False
    low_ok = key_range.low is None or order(key) >= order(key_range.low)
    high_ok = key_range.high is None or order(key) < order(key_range.high)
    return low_ok and high_ok


def _terms(keys: list[str], kinds: list[str]) -> pa.Table:
    return pa.table({"vertex": pa.array(keys, pa.string()), "vertex_kind": pa.array(kinds)})


def _read_all(keys, kinds, sample, target, order, cap_rows=None):
    """Drive the planner as the source does; return how often each key was read."""
    planner = RangePlanner(sample, target)
    cursor = RangeCursor(row_cap=cap_rows)
    seen = [0] * len(keys)
    for _ in range(10_000):
        if cursor.finished:
            break
        key_range, members = planner.next_range(cursor)
        hits = [i for i, k in enumerate(keys) if _in(k, kinds[i], key_range, order)]
        for i in hits:
            seen[i] += 1
        cursor.advance(key_range, len(hits), members)
    assert cursor.finished
    return seen


iri_text = st.text(
    alphabet=st.characters(codec="utf-8", exclude_categories=("Cs",)), min_size=0, max_size=12
).map(lambda tail: "http://e.test/" + tail)


@settings(max_examples=150, deadline=None)
@given(
    keys=st.lists(iri_text, min_size=0, max_size=60, unique=True),
    blanks=st.integers(0, 5),
    cap=st.integers(1, 8),
    target=st.integers(1, 30),
    chunk=st.integers(1, 17),
)
def test_ranges_partition_the_keys(keys, blanks, cap, target, chunk):
    all_keys = keys + [f"_:b{i}" for i in range(blanks)]
    kinds = ["iri"] * len(keys) + ["blank"] * blanks
    sampler = KeySampler("vertex", cap=cap)
    for start in range(0, len(all_keys), chunk):
        sampler.add(_terms(all_keys[start : start + chunk], kinds[start : start + chunk]))
    sample = sampler.sample()
    assert sample.iri_members == len(keys) and sample.blank_members == blanks
    assert len(sample.bounds) <= 2 * cap
    assert all(b.isascii() and '"' not in b and "\\" not in b for b in sample.bounds)
    for order in (lambda s: s, _utf16):  # code points (Oxigraph), UTF-16 units (Jena)
        assert _read_all(all_keys, kinds, sample, target, order) == [1] * len(all_keys)


@settings(max_examples=80, deadline=None)
@given(keys=st.lists(iri_text, min_size=2, max_size=60, unique=True), cap=st.integers(2, 8))
def test_narrower_ranges_stay_inside(keys, cap):
    sampler = KeySampler("vertex", cap=cap)
    sampler.add(_terms(keys, ["iri"] * len(keys)))
    planner = RangePlanner(sampler.sample(), 10**9)
    whole = KeyRange()
    part = planner.narrower(whole)
    while part is not None:
        inside = {k for k in keys if _in(k, "iri", part, lambda s: s)}
        assert inside <= {k for k in keys if _in(k, "iri", whole, lambda s: s)}
        assert part.low == whole.low and part.high is not None
        whole, part = part, planner.narrower(part)


def test_sampler_keeps_a_bounded_stride_sample():
    sampler = KeySampler("vertex", cap=100)
    keys = [f"http://e.test/{i:06d}" for i in range(10_000)]
    for start in range(0, len(keys), 333):
        sampler.add(_terms(keys[start : start + 333], ["iri"] * len(keys[start : start + 333])))
    sample = sampler.sample()
    assert 100 <= len(sample.bounds) <= 200
    assert list(sample.bounds) == sorted(sample.bounds)
    assert sample.bounds[0] == keys[0]  # positions 0, s, 2s, ... are kept
    # each bound stands for about 10_000 / len(bounds) members
    assert abs(sample.weight * len(sample.bounds) - 10_000) < 1


def test_range_sizes_follow_the_rows_per_member():
    sampler = KeySampler("vertex", cap=1000)
    keys = [f"http://e.test/{i:06d}" for i in range(1000)]
    sampler.add(_terms(keys, ["iri"] * 1000))
    planner = RangePlanner(sampler.sample(), 100)
    cursor = RangeCursor()
    first, members = planner.next_range(cursor)
    assert (first.low, first.high) == (None, keys[100])
    cursor.advance(first, 400, members)  # four rows per member: next slice ~25 members
    second, _ = planner.next_range(cursor)
    assert (second.low, second.high) == (keys[100], keys[125])


def test_cursor_round_trip():
    cursor = RangeCursor(low='http://e.test/"odd"', blanks_done=True, rows=5, members=2.5)
    assert RangeCursor.decode(cursor.encode()) == cursor
    assert RangeCursor.decode(None) == RangeCursor()


def test_a_capped_sample_reads_the_blank_slice_and_then_sizes_from_the_cap():
    """A sample cut by a result cap may have missed blank nodes: their slice is read anyway,
    and an empty answer there must not make the next slice the whole unit."""
    from dataclasses import replace

    sampler = KeySampler("vertex", cap=1000)
    keys = [f"http://e.test/{i:06d}" for i in range(1000)]
    sampler.add(_terms(keys, ["iri"] * 1000))
    planner = RangePlanner(replace(sampler.sample(), complete=False), 100_000)
    cursor = RangeCursor(row_cap=400)
    assert not planner.whole_unit_fits(cursor)
    blank, members = planner.next_range(cursor)
    assert blank.blank_nodes and members == 0
    cursor.advance(blank, 0, members)  # no blank nodes after all
    first, _ = planner.next_range(cursor)
    # rows per member unknown: a quarter of the cap, 100 members at one row each
    assert (first.low, first.high) == (None, keys[100])
