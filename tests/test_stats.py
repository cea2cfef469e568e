"""Paired bootstrap, sign-flip test, Holm and effect size: hand cases and seeded sanity."""

from __future__ import annotations

import math

import numpy as np
import pytest

from trawl.errors import UsageError
from trawl.stats import (Estimate, bootstrap_intervals, bootstrap_many, bootstrap_means,
                         effect_size, holm, paired_bootstrap, randomisation_many,
                         randomisation_test)


def noisy_pair(seed: int, n: int = 200, shift: float = 0.0):
    rng = np.random.default_rng(seed)
    truth = rng.random(n)
    return (np.clip(truth + shift + rng.normal(0, 0.15, n), 0, 1),
            np.clip(truth + rng.normal(0, 0.15, n), 0, 1))


# --- randomisation test ------------------------------------------------------------------------

def test_sign_flip_exact_by_hand():
    # d = (1, 2, 3): the 8 sign patterns give sums 6, 4, 2, 0, 0, -2, -4, -6;
    # |sum| >= 6 for 2 of them, so the exact two-sided p-value is 2/8.
    assert randomisation_test([1, 2, 3], [0, 0, 0]) == 0.25
    # d = (1, 1, 1, 1): only the all-plus and all-minus patterns reach |4|: 2/16
    assert randomisation_test([1, 1, 1, 1], [0, 0, 0, 0]) == 0.125


def test_sign_flip_counts_float_ties_as_extreme():
    # 0.1 + 0.2 and 0.3 differ in the last bit; the flipped sums tie with the observed one
    a = [0.1, 0.2, 0.0]
    b = [0.0, 0.0, 0.3]
    # d = (0.1, 0.2, -0.3), observed sum 0 (up to rounding): every pattern is as extreme
    assert randomisation_test(a, b) == 1.0


def test_sign_flip_monte_carlo_is_seeded_and_bounded():
    a, b = noisy_pair(1, shift=0.2)
    p1 = randomisation_test(a, b, resamples=999, seed=3)
    assert p1 == randomisation_test(a, b, resamples=999, seed=3)
    assert p1 == pytest.approx(1 / 1000)  # a clear difference: no resample as extreme
    same = randomisation_test(a, a, resamples=999)
    assert same == 1.0


def test_randomisation_many_equals_one_at_a_time():
    a, b = noisy_pair(2, shift=0.01)
    c, _ = noisy_pair(3, shift=0.02)
    many = randomisation_many(np.stack([a - b, c - b], axis=1), 2000, seed=5)
    assert many[0] == randomisation_test(a, b, 2000, seed=5)
    assert many[1] == randomisation_test(c, b, 2000, seed=5)


# --- bootstrap -----------------------------------------------------------------------------------

def test_bootstrap_estimate_fields_and_determinism():
    a, b = noisy_pair(4, shift=0.03)
    e = paired_bootstrap(a, b, resamples=2000, seed=9)
    assert isinstance(e, Estimate) and e.n == 200
    assert e.mean == pytest.approx(float(np.mean(a - b)))
    assert e.low < e.mean < e.high
    assert paired_bootstrap(a, b, resamples=2000, seed=9) == e
    assert paired_bootstrap(a, b, resamples=2000, seed=10) != e
    with pytest.raises(Exception):
        e.mean = 0  # frozen


def test_bootstrap_means_are_means_of_resampled_rows():
    values = np.array([[0.0, 1.0], [1.0, 1.0], [2.0, 1.0]])
    boot = bootstrap_means(values, 500, seed=0)
    assert boot.shape == (500, 2)
    assert np.all(boot[:, 1] == 1.0)
    # each resampled mean of (0, 1, 2) is a multiple of 1/3 between 0 and 2
    thirds = boot[:, 0] * 3
    assert np.allclose(thirds, np.round(thirds)) and boot[:, 0].min() >= 0 and \
        boot[:, 0].max() <= 2
    assert len(np.unique(boot[:, 0])) > 3


def test_bootstrap_p_value_for_no_difference_and_constant_difference():
    a, _ = noisy_pair(5)
    same = paired_bootstrap(a, a, resamples=500)
    assert (same.mean, same.low, same.high, same.p_value) == (0.0, 0.0, 0.0, 1.0)
    shifted = paired_bootstrap(a + 0.1, a, resamples=500)
    assert shifted.low == pytest.approx(0.1) and shifted.high == pytest.approx(0.1)


def test_one_query_gives_no_interval_and_p_one():
    e = paired_bootstrap([0.7], [0.2], resamples=100)
    assert e.mean == pytest.approx(0.5) and e.p_value == 1.0
    assert math.isnan(e.low) and math.isnan(e.high)


def test_bca_differs_from_percentile_on_skewed_data():
    rng = np.random.default_rng(6)
    d = rng.exponential(0.1, 60)
    pct = paired_bootstrap(d, np.zeros_like(d), 4000, seed=1)
    bca = paired_bootstrap(d, np.zeros_like(d), 4000, seed=1, method="bca")
    assert bca.mean == pct.mean and bca.p_value == pct.p_value
    assert bca.low != pct.low
    # right skew: BCa moves both bounds up relative to the percentile interval
    assert bca.low > pct.low and bca.high > pct.high


def test_bootstrap_intervals_of_means_cover_the_sample_mean():
    rng = np.random.default_rng(7)
    values = rng.random((300, 3))
    for (low, high), m in zip(bootstrap_intervals(values, 1000, seed=2), values.mean(axis=0)):
        assert low < m < high and high - low < 0.1


@pytest.mark.parametrize("kw, says", [
    ({"resamples": 0}, "resamples=0 must be at least 1"),
    ({"method": "studentised"}, "interval method 'studentised' is not one of"),
    ({"alpha": 1.5}, "alpha=1.5 must lie between 0 and 1"),
])
def test_bootstrap_rejects_bad_settings(kw, says):
    with pytest.raises(UsageError, match=says):
        paired_bootstrap([0.1, 0.2], [0.0, 0.1], **kw)


@pytest.mark.parametrize("a, b, says", [
    ([0.1, 0.2], [0.1], "equal length"),
    ([], [], "empty"),
    ([0.1, float("nan")], [0.1, 0.2], "NaN"),
])
def test_paired_inputs_are_checked(a, b, says):
    with pytest.raises(UsageError, match=says):
        paired_bootstrap(a, b)
    with pytest.raises(UsageError, match=says):
        randomisation_test(a, b)


# --- Holm and effect size ---------------------------------------------------------------------

def test_holm_by_hand():
    # sorted p: 0.01, 0.02, 0.03, 0.5 times 4, 3, 2, 1 -> 0.04, 0.06, 0.06 (running max), 0.5
    got = holm([0.03, 0.5, 0.01, 0.02])
    assert got == pytest.approx([0.06, 0.5, 0.04, 0.06])
    assert holm([0.6, 0.9]) == pytest.approx([1.0, 1.0])  # capped at 1


def test_holm_skips_nan():
    got = holm([0.01, float("nan"), 0.04])
    assert got[0] == pytest.approx(0.02) and math.isnan(got[1]) and got[2] == pytest.approx(0.04)


def test_effect_size_by_hand():
    # d = (1, 2, 3): mean 2, sample sd 1
    assert effect_size([1, 2, 3], [0, 0, 0]) == pytest.approx(2.0)
    assert effect_size([0.5, 0.5], [0.5, 0.5]) == 0.0
    assert math.isnan(effect_size([1, 1], [0, 0]))  # constant, non-zero: no spread
    assert math.isnan(effect_size([1], [0]))


# --- statistical sanity (seeded simulations) ----------------------------------------------------

def test_false_positive_rate_near_alpha_for_same_system_with_noise():
    # Two runs that are one system plus independent noise: a test at alpha 0.05 should
    # reject about 5% of the time. 400 seeded simulations of 40 queries; the band
    # 0.025-0.08 is about +-2.4 binomial standard errors around 0.05 (sd 0.011).
    n_sims, n = 400, 40
    rng = np.random.default_rng(2024)
    diffs = np.empty((n, n_sims))
    for s in range(n_sims):
        truth = rng.random(n)
        a = np.clip(truth + rng.normal(0, 0.2, n), 0, 1)
        b = np.clip(truth + rng.normal(0, 0.2, n), 0, 1)
        diffs[:, s] = a - b
    p_rand = randomisation_many(diffs, 1000, seed=1)
    p_boot = np.array([e.p_value for e in bootstrap_many(diffs, 1000, seed=1)])
    assert 0.025 <= np.mean(p_rand < 0.05) <= 0.08
    assert 0.025 <= np.mean(p_boot < 0.05) <= 0.08


def test_percentile_interval_covers_a_known_mean_about_95_percent_of_the_time():
    # True mean difference 0.02; 300 seeded simulations of 60 queries. Percentile
    # intervals of small samples run a little narrow (common practice, no source),
    # so the band 0.89-0.98 allows for that and for binomial noise (sd 0.013).
    n_sims, n = 300, 60
    rng = np.random.default_rng(99)
    diffs = rng.normal(0.02, 0.1, size=(n, n_sims))
    est = bootstrap_many(diffs, 1000, seed=4)
    covered = np.mean([e.low <= 0.02 <= e.high for e in est])
    assert 0.89 <= covered <= 0.98
