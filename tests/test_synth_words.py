"""Words, stems, overlap figures and the overlap profile, on hand-computed cases."""

from __future__ import annotations

import random

import pytest

from trawl.synth.overlap import OverlapProfile, overlap, profile_from
from trawl.synth.text import content_words, stem, stems


@pytest.mark.parametrize("word, expected", [
    # Harman (1991), "How effective is suffixing?", JASIS 42(1), the three S-stemmer rules
    # applied by hand: -ies -> -y (not -eies/-aies), -es -> -e (not -aes/-ees/-oes),
    # -s -> '' (not -us/-ss).
    ("ponies", "pony"), ("horses", "horse"), ("cats", "cat"), ("glass", "glass"),
    ("corpus", "corpus"), ("toes", "toe"), ("fees", "fee"), ("fare", "fare"),
])
def test_harman_s_stemmer(word, expected):
    assert stem(word) == expected


def test_content_words_drop_stop_words_digits_and_single_letters():
    assert content_words("How do I top-up my card at 5 stops, e.g. X?") == \
        ["top-up", "card", "stops"]


def test_overlap_hand_computed():
    item = stems("Day tickets and passes\nA day ticket costs less than two singles.")
    # query content words: cheap, day, tickets -> day and ticket are in the item, cheap is not
    assert overlap("cheap day tickets", item) == pytest.approx(2 / 3)
    assert overlap("how do I get it", item) is None  # no content words at all
    assert overlap("PASSES", item) == 1.0  # case and plural folded


def test_profile_sampling_follows_quantiles():
    prof = OverlapProfile((0.0, 0.5, 1.0), ceiling=1.0)
    rng = random.Random(3)
    draws = [prof.sample(rng) for _ in range(4000)]
    # linear between quantiles 0, .5, 1 is uniform on [0, 1]: mean 0.5, a quarter below .25
    assert sum(draws) / len(draws) == pytest.approx(0.5, abs=0.02)
    assert sum(d < 0.25 for d in draws) / len(draws) == pytest.approx(0.25, abs=0.025)


def test_profile_from_values_uses_quantiles_and_90th_percentile_ceiling():
    prof = profile_from([k / 10 for k in range(11)], "test", points=3)
    assert prof.quantiles == (0.0, 0.5, 1.0)
    assert prof.ceiling == pytest.approx(0.9)
    low = profile_from([0.0, 0.1, 0.2], "test")
    assert low.ceiling == 0.5  # never below 0.5
