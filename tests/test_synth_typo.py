"""Typo model: every error is one of Damerau's four single-error classes, at the set rate."""

from __future__ import annotations

import random
from collections import Counter

import pytest

from trawl.synth.typo import KINDS, NEIGHBOURS, add_typos, misspell


def _osa(a: str, b: str) -> int:
    """Optimal string alignment distance (Damerau 1964's four operations), by hand DP."""
    d = [[i + j if i * j == 0 else 0 for j in range(len(b) + 1)] for i in range(len(a) + 1)]
    for i in range(1, len(a) + 1):
        for j in range(1, len(b) + 1):
            d[i][j] = min(d[i - 1][j] + 1, d[i][j - 1] + 1,
                          d[i - 1][j - 1] + (a[i - 1] != b[j - 1]))
            if i > 1 and j > 1 and a[i - 1] == b[j - 2] and a[i - 2] == b[j - 1]:
                d[i][j] = min(d[i][j], d[i - 2][j - 2] + 1)
    return d[-1][-1]


def test_keyboard_neighbours_match_the_qwerty_layout():
    # QWERTY rows, by looking at a keyboard: g touches f, h (same row), t, y (above), v, b (below)
    assert set("fhtyvb") <= set(NEIGHBOURS["g"])
    assert "p" not in NEIGHBOURS["g"] and "g" not in NEIGHBOURS["g"]
    assert set(NEIGHBOURS["q"]) == set("was")  # q: w beside it, a and s below
    assert all(b in NEIGHBOURS[a] for a in NEIGHBOURS for b in NEIGHBOURS[a])  # symmetric


def test_every_misspelling_is_one_damerau_error_and_kinds_are_balanced():
    rng = random.Random(11)
    kinds = Counter()
    for _ in range(2000):
        word = rng.choice(["refund", "ticket", "journey", "timetable", "wheelchair"])
        new, kind = misspell(word, rng)
        assert new != word
        assert _osa(word, new) == 1
        if kind == "substitution":
            k = next(i for i, (x, y) in enumerate(zip(word, new)) if x != y)
            assert new[k] in NEIGHBOURS[word[k]]
        kinds[kind] += 1
    assert set(kinds) == set(KINDS)
    for kind in KINDS:  # each class drawn with chance 1/4 (binomial sd ~0.01 over 2000)
        assert kinds[kind] / 2000 == pytest.approx(0.25, abs=0.04)


@pytest.mark.parametrize("rate", [0.05, 0.2, 0.5])
def test_typo_rate_within_tolerance(rate):
    rng = random.Random(5)
    changed = total = 0
    for _ in range(1500):
        q = "replace damaged smart card quickly"
        out = add_typos(q, rng, rate)
        for a, b in zip(q.split(), out.split()):
            total += 1
            changed += a != b
    # binomial: 7500 words, sd = sqrt(r(1-r)/7500) <= 0.006; 4 sd tolerance
    assert changed / total == pytest.approx(rate, abs=0.025)


def test_short_words_and_numbers_are_left_alone():
    rng = random.Random(0)
    assert add_typos("bus 42 to the zoo", rng, rate=1.0) == "bus 42 to the zoo"
