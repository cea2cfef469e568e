"""The one stratified sampler shared by synthesis (items) and review (queries)."""

from __future__ import annotations

from collections import Counter

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from trawl.errors import UsageError
from trawl.sampling import allocate, stratified_sample


def test_plain_allocation_matches_the_published_largest_remainder_example():
    # The largest remainder (Hamilton / Hare quota) worked example: 100,000 votes over six
    # parties, 10 seats -> 5, 2, 1, 1, 1, 0 (Wikipedia, "Largest remainder method";
    # from memory).
    votes = {"yellow": 47_000, "white": 16_000, "red": 15_800, "green": 12_000,
             "blue": 6_100, "pink": 3_100}
    assert allocate(votes, 10, at_least_one=False) == {
        "yellow": 5, "white": 2, "red": 1, "green": 1, "blue": 1, "pink": 0}


def test_every_type_gets_one_when_the_sample_allows():
    # same example with the minimum: pink's seat is the last remainder's (white's)
    votes = {"yellow": 47_000, "white": 16_000, "red": 15_800, "green": 12_000,
             "blue": 6_100, "pink": 3_100}
    assert allocate(votes, 10) == {"yellow": 5, "white": 1, "red": 1, "green": 1, "blue": 1,
                                   "pink": 1}
    # the minimum is taken back from the type furthest above its share, not from the
    # small types (common practice, no source)
    assert allocate({"a": 97, "b": 1, "c": 1, "d": 1}, 4) == {"a": 1, "b": 1, "c": 1, "d": 1}


@settings(max_examples=300, deadline=None)
@given(st.lists(st.integers(1, 30), min_size=1, max_size=7), st.data())
def test_allocation_is_exact_bounded_and_keeps_every_type(sizes, data):
    counts = {f"t{i}": s for i, s in enumerate(sizes)}
    n = data.draw(st.integers(1, sum(sizes)))
    alloc = allocate(counts, n)
    assert sum(alloc.values()) == n
    assert all(0 <= alloc[t] <= counts[t] for t in counts)
    if n >= len(counts):
        assert min(alloc.values()) >= 1


def test_sample_keeps_input_order_and_is_seeded():
    members = [("a", k) for k in range(60)] + [("s", k) for k in range(30)] + \
        [("f", k) for k in range(10)]
    chosen = stratified_sample(members, lambda m: m[0], 20, seed=0)
    assert Counter(m[0] for m in chosen) == {"a": 12, "s": 6, "f": 2}
    assert chosen == [m for m in members if m in chosen]
    assert stratified_sample(members, lambda m: m[0], 20, seed=0) == chosen
    assert stratified_sample(members, lambda m: m[0], 20, seed=1) != chosen
    assert stratified_sample(members, lambda m: m[0], None, seed=0) == members
    assert stratified_sample(members, lambda m: m[0], 500, seed=0) == members


def test_one_type_draw_does_not_depend_on_the_others():
    a_only = [("a", k) for k in range(50)]
    mixed = a_only + [("b", k) for k in range(50)]
    alone = stratified_sample(a_only, lambda m: m[0], 10, seed=3)
    together = stratified_sample(mixed, lambda m: m[0], 20, seed=3)
    assert [m for m in together if m[0] == "a"] == alone


def test_a_sample_below_one_is_refused():
    with pytest.raises(UsageError, match="sample=0 must be >= 1"):
        stratified_sample([1, 2, 3], str, 0, seed=0)
