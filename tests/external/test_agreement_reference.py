"""Agreement statistics checked against reference libraries.

Sources: statsmodels (Wilson interval), scikit-learn (Cohen's kappa, plain and
weighted), scipy.stats (Kendall's tau-b, Spearman's rho, percentile bootstrap).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats
from sklearn.metrics import cohen_kappa_score
from statsmodels.stats.proportion import proportion_confint

from trawl.agreement import agree
from trawl.stats import cohen_kappa, kendall_tau_b, spearman_rho, wilson_interval
from trawl.metrics import per_query
from trawl.runs import make_run


@pytest.mark.parametrize("alpha", [0.05, 0.1, 0.01])
def test_wilson_matches_statsmodels(alpha):
    # Reference: statsmodels.stats.proportion.proportion_confint(method="wilson").
    for n in (1, 2, 5, 13, 40, 250):
        for s in sorted({0, 1, n // 3, n // 2, n - 1, n}):
            ours = wilson_interval(s, n, alpha)
            low, high = proportion_confint(s, n, alpha=alpha, method="wilson")
            assert (ours.low, ours.high) == pytest.approx((low, high), abs=1e-12), (s, n)


@pytest.mark.parametrize("weights", [None, "linear", "quadratic"])
def test_kappa_matches_scikit_learn(weights):
    # Reference: sklearn.metrics.cohen_kappa_score with the same labels and weights.
    rng = np.random.default_rng(7)
    for trial in range(30):
        n = int(rng.integers(5, 80))
        a = rng.integers(0, 4, n)
        b = np.clip(a + rng.integers(-2, 3, n) * (rng.random(n) < 0.5), 0, 3)
        labels = [0, 1, 2, 3]
        ours = cohen_kappa(a.tolist(), b.tolist(), weights, labels=labels)
        ref = cohen_kappa_score(a, b, weights=weights, labels=labels)
        assert ours == pytest.approx(ref, abs=1e-12), trial


def test_kappa_on_string_labels_matches_scikit_learn():
    # Reference: sklearn.metrics.cohen_kappa_score (labels sorted by default in both).
    a = ["ok", "no", "ok", "ok", "maybe", "no", "ok", "maybe"]
    b = ["ok", "no", "no", "ok", "ok", "no", "maybe", "maybe"]
    assert cohen_kappa(a, b) == pytest.approx(cohen_kappa_score(a, b), abs=1e-12)


def test_tau_b_and_rho_match_scipy_with_ties():
    # Reference: scipy.stats.kendalltau (tau-b, the default variant) and scipy.stats.spearmanr.
    rng = np.random.default_rng(11)
    for trial in range(50):
        n = int(rng.integers(3, 25))
        x = rng.integers(0, 6, n).astype(float)  # few values: many ties
        y = x + rng.integers(-3, 4, n)
        if len(set(x)) < 2 or len(set(y)) < 2:
            continue
        assert kendall_tau_b(x, y) == pytest.approx(stats.kendalltau(x, y).statistic,
                                                    abs=1e-12), trial
        assert spearman_rho(x, y) == pytest.approx(stats.spearmanr(x, y).statistic,
                                                   abs=1e-12), trial


def test_agree_interval_matches_scipy_bootstrap_when_all_queries_are_shared():
    # Reference: scipy.stats.bootstrap (percentile method) resampling query indices, with a
    # statistic that recomputes Spearman's rho between per-system means under the two
    # judgment sets. Both are Monte Carlo estimates: tolerance 0.06 (a few rho steps).
    rng = np.random.default_rng(5)
    items = [f"d{i}" for i in range(40)]
    qa = {f"q{q}": {items[(2 * q + j) % 40]: 2 - (j > 0) for j in range(4)} for q in range(60)}
    qb = {q: {i: g for i, g in rel.items() if rng.random() < 0.6} or {next(iter(rel)): 1}
          for q, rel in qa.items()}
    runs = [make_run(f"s{k}", {q: [(i, rel.get(i, 0) + rng.normal(0, noise)) for i in items]
                               for q, rel in qa.items()})
            for k, noise in enumerate([0.9, 1.0, 1.1, 1.2, 1.3, 1.4, 1.6, 2.0])]
    ours = agree(qa, qb, runs, resamples=4000, seed=1)
    assert ours.shared == 60
    sa = np.column_stack([per_query(qa, r, ["ndcg@10"])["ndcg@10"].to_numpy() for r in runs])
    sb = np.column_stack([per_query(qb, r, ["ndcg@10"])["ndcg@10"].to_numpy() for r in runs])

    def rho(idx, axis=-1):  # vectorised: one row of resampled query indices per replicate
        idx = np.atleast_2d(idx.astype(int))
        ra = stats.rankdata(sa[idx].mean(axis=-2), axis=-1)
        rb = stats.rankdata(sb[idx].mean(axis=-2), axis=-1)
        ra -= ra.mean(axis=-1, keepdims=True)
        rb -= rb.mean(axis=-1, keepdims=True)
        return (ra * rb).sum(-1) / np.sqrt((ra * ra).sum(-1) * (rb * rb).sum(-1))

    ref = stats.bootstrap((np.arange(60),), rho, vectorized=True, n_resamples=4000,
                          method="percentile", random_state=2).confidence_interval
    assert ours.rho.value == pytest.approx(
        stats.spearmanr(sa.mean(axis=0), sb.mean(axis=0)).statistic, abs=1e-12)
    assert ours.rho.low == pytest.approx(ref.low, abs=0.06)
    assert ours.rho.high == pytest.approx(ref.high, abs=0.06)
