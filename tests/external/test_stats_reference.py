"""trawl.stats against scipy.stats and statsmodels.

References: scipy.stats.bootstrap (paired=True, percentile and BCa),
scipy.stats.permutation_test (permutation_type='samples', the paired sign-flip test),
statsmodels.stats.multitest.multipletests(method='holm'). Resampling results agree
within Monte Carlo tolerance (different random streams); exact ones to 1e-12.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats as scipy_stats
from statsmodels.stats.multitest import multipletests

from trawl.stats import holm, paired_bootstrap, randomisation_test

RESAMPLES = 10000


def mean_diff(x, y, axis=-1):
    return np.mean(x - y, axis=axis)


def datasets():
    rng = np.random.default_rng(11)
    truth = rng.random(150)
    yield "continuous", np.clip(truth + rng.normal(0.03, 0.2, 150), 0, 1), truth
    hits = rng.random(200) < 0.55
    yield "binary hits", (rng.random(200) < 0.62).astype(float), hits.astype(float)
    skew = rng.exponential(0.08, 80)
    yield "skewed", skew, np.zeros(80)


@pytest.mark.parametrize("method", ["percentile", "bca"])
@pytest.mark.parametrize("name, a, b", list(datasets()), ids=[d[0] for d in datasets()])
def test_bootstrap_interval_agrees_with_scipy(name, a, b, method):
    ours = paired_bootstrap(a, b, RESAMPLES, seed=0, method=method)
    ref = scipy_stats.bootstrap((a, b), mean_diff, paired=True, vectorized=True,
                                n_resamples=RESAMPLES, method=method,
                                rng=np.random.default_rng(1)).confidence_interval
    width = ref.high - ref.low
    # Each bound's Monte Carlo error is about 1% of the width at 10,000 resamples
    # (quantile standard error, normal approximation); allow 5%.
    assert abs(ours.low - ref.low) < 0.05 * width
    assert abs(ours.high - ref.high) < 0.05 * width
    assert ours.mean == pytest.approx(float(np.mean(a - b)), abs=1e-15)


@pytest.mark.parametrize("shift", [0.0, 0.02, 0.04])
def test_randomisation_p_agrees_with_scipy_permutation_test(shift):
    rng = np.random.default_rng(int(shift * 1000))
    truth = rng.random(120)
    a = np.clip(truth + shift + rng.normal(0, 0.15, 120), 0, 1)
    b = np.clip(truth + rng.normal(0, 0.15, 120), 0, 1)
    ours = randomisation_test(a, b, RESAMPLES, seed=0)
    ref = scipy_stats.permutation_test((a, b), mean_diff, permutation_type="samples",
                                       vectorized=True, n_resamples=RESAMPLES,
                                       alternative="two-sided",
                                       rng=np.random.default_rng(1)).pvalue
    # two independent Monte Carlo estimates: standard error sqrt(2 p (1 - p) / B)
    se = np.sqrt(2 * ref * (1 - ref) / RESAMPLES) + 1e-4
    assert abs(ours - ref) < 4 * se


def test_randomisation_p_equals_scipy_exactly_when_enumerated():
    rng = np.random.default_rng(5)
    for _ in range(5):
        a, b = rng.random(10), rng.random(10)
        ours = randomisation_test(a, b, resamples=2 ** 10)
        ref = scipy_stats.permutation_test((a, b), mean_diff, permutation_type="samples",
                                           vectorized=True, n_resamples=2 ** 10,
                                           alternative="two-sided").pvalue
        assert ours == pytest.approx(ref, abs=1e-12)


@pytest.mark.parametrize("seed", range(4))
def test_holm_equals_statsmodels(seed):
    rng = np.random.default_rng(seed)
    p = rng.random(rng.integers(1, 30)) ** 3
    p[: len(p) // 3] = p[0]  # ties
    assert holm(p) == pytest.approx(multipletests(p, method="holm")[1], abs=1e-15)
