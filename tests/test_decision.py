"""The decision: recommendation and wording on synthetic runs, non-inferiority and sample
sizes checked against statsmodels, scipy and a seeded simulation."""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy import stats as sps
from statsmodels.stats.power import TTestPower

from trawl.decision import (CANT_TELL, NO, YES, Decision, Limits, SystemFigures, decide,
                            decide_runs, queries_needed)
from trawl.errors import UsageError
from trawl.pipeline.bundle import from_json
from trawl.runs import make_run

N = 80


def _three(seed: int = 3):
    """Invented figures (demo only): best, a 3x faster copy within the margin, and a
    slower, larger and worse one."""
    rng = np.random.default_rng(seed)
    base = rng.uniform(0.2, 0.9, N)
    best = base + 0.08 + rng.normal(0, 0.03, N)
    fast = best - 0.002 + rng.normal(0, 0.004, N)
    poor = base + rng.normal(0, 0.03, N)
    systems = [SystemFigures("best", 9.0, 15.0, 80_000_000, 60.0),
               SystemFigures("fast", 3.0, 5.0, 80_000_000, 20.0),
               SystemFigures("poor", 12.0, 20.0, 90_000_000, 70.0)]
    return systems, np.stack([best, fast, poor])


def test_cheaper_within_the_margin_is_recommended_and_the_dominated_one_named():
    systems, scores = _three()
    d = decide(systems, scores, Limits(margin=0.01), resamples=2000)
    assert (d.verdict, d.leader, d.recommended) == ("ship", "best", "fast")
    assert d.headline.startswith("ship fast: not worse than best by more than 0.01 ndcg@10 (")
    assert "3.0x faster at p95 (5 vs 15 ms), same index size" in d.headline
    dominated = {c.name: c.dominated_by for c in d.candidates}
    assert dominated == {"best": None, "fast": None, "poor": "best"}
    pair = {p.candidate: p for p in d.pairs}
    assert pair["fast"].non_inferior == YES and pair["fast"].low > -0.01
    assert pair["poor"].non_inferior == NO and pair["poor"].high < -0.01
    assert d.caution is None and d.review_sample is None  # people's judgments: final


def test_a_latency_limit_leaves_the_best_one():
    systems, scores = _three()
    d = decide(systems, scores, Limits(max_latency_ms=4.0), resamples=500)
    assert d.verdict == "none fits" and d.recommended is None
    assert "fast: p95 5 ms over the 4 ms limit" in d.headline
    d = decide([systems[0], systems[2]], scores[[0, 2]], Limits(max_index_mb=85),
               resamples=500)
    assert d.recommended == "best" and d.headline.startswith("ship best: the only system")
    assert d.candidates[1].excluded_because == ("index 90 MB over the 85 MB limit",)


def test_runs_that_cannot_be_told_apart_say_so_with_a_sample_size():
    rng = np.random.default_rng(7)
    a = rng.uniform(0, 1, 40)
    b = a + rng.normal(0.01, 0.15, 40)  # same spend, noisy, no clear difference
    systems = [SystemFigures("a", 5, 8, 10_000_000), SystemFigures("b", 5, 8, 10_000_000)]
    d = decide(systems, [a, b], resamples=2000)
    pair = d.pairs[0]
    assert d.verdict == CANT_TELL and not pair.separated
    assert pair.low < 0 < pair.high
    needed = queries_needed(max(abs(pair.diff), 0.01), pair.sd, 0.05)
    assert d.queries_needed == needed and needed > 40
    assert d.headline.startswith(f"can't tell {d.leader} from ")
    assert f"judge about {needed} queries in all ({needed - 40} more) to separate them" \
        in d.headline
    silver = decide(systems, [a, b], resamples=2000, silver=True)
    assert silver.review_sample == 40  # the whole set, and the caution says it is too few
    assert silver.caution.endswith(f"(all 40 queries of the set; {needed} would be needed, "
                                   "so synthesise more)")


def test_a_near_tie_ships_the_cheaper_and_names_an_open_question():
    rng = np.random.default_rng(4)
    a = rng.uniform(0, 1, 60)
    def noise(sd):  # centred, so the mean differences are exactly as written
        e = rng.normal(0, sd, 60)
        return e - e.mean()

    b = a - 0.0005 + noise(0.004)  # within the margin but slower: ship a
    c = a - 0.008 + noise(0.05)  # cheapest, but is it within the margin?
    d = decide([SystemFigures("a", 4, 6, 10), SystemFigures("b", 6, 9, 10)], [a, b],
               resamples=2000)
    assert d.pairs[0].non_inferior == YES and d.recommended == "a" and d.verdict == "ship"
    d = decide([SystemFigures("a", 4, 6, 10), SystemFigures("b", 6, 9, 10),
                SystemFigures("c", 1, 2, 10)], [a, b, c], resamples=2000)
    pair = {p.candidate: p for p in d.pairs}["c"]
    assert pair.non_inferior == CANT_TELL and d.verdict == CANT_TELL
    assert d.headline == (
        f"can't tell whether c is within 0.01 ndcg@10 of a with 60 queries (difference "
        f"{pair.diff:+.3f}, 95% interval {pair.low:+.3f} to {pair.high:+.3f}); judge about "
        f"{pair.queries_to_confirm} queries in all ({pair.queries_to_confirm - 60} more) to "
        "confirm it; until then ship a")


def test_silver_verdicts_are_provisional_and_propose_a_review_sample():
    systems, scores = _three()
    d = decide(systems, scores, silver=True, resamples=500)
    assert d.caution.startswith("provisional: silver judgments rank systems but are no "
                                "substitute for people")
    assert d.review_sample == min(max(d.queries_needed, 10), N)


@pytest.mark.parametrize("delta,sd,alpha", [(0.02, 0.1, 0.05), (0.05, 0.2, 0.05),
                                            (0.01, 0.03, 0.01), (0.1, 0.12, 0.05)])
def test_sample_size_matches_statsmodels_t_test_power(delta, sd, alpha):
    # Reference: statsmodels.stats.power.TTestPower.solve_power (one-sample / paired t test,
    # non-central t), two-sided for separating two systems ...
    exact = TTestPower().solve_power(effect_size=delta / sd, alpha=alpha, power=0.8,
                                     alternative="two-sided")
    assert abs(queries_needed(delta, sd, alpha) - exact) <= 1.0
    # ... and one-sided at alpha/2 for non-inferiority (difference + margin > 0).
    exact = TTestPower().solve_power(effect_size=delta / sd, alpha=alpha / 2, power=0.8,
                                     alternative="larger")
    assert abs(queries_needed(delta, sd, alpha, sides=2) - exact) <= 1.0


def test_sample_size_gives_its_power_in_a_seeded_simulation():
    # 4000 simulated studies of n paired differences ~ N(delta, sd) with n from
    # queries_needed; a two-sided paired t test (scipy) should reject about 80% of them.
    delta, sd = 0.03, 0.12
    n = queries_needed(delta, sd, 0.05)
    rng = np.random.default_rng(11)
    d = rng.normal(delta, sd, size=(4000, n))
    rejected = sps.ttest_1samp(d, 0.0, axis=1).pvalue < 0.05
    assert 0.77 <= rejected.mean() <= 0.83
    # non-inferiority: lower 97.5% t bound above -margin, true difference 0, margin 0.02
    m = 0.02
    n = queries_needed(0 + m, sd, 0.05, sides=2)
    d = rng.normal(0.0, sd, size=(4000, n))
    low = d.mean(axis=1) - sps.t.ppf(0.975, n - 1) * d.std(axis=1, ddof=1) / np.sqrt(n)
    assert 0.77 <= (low > -m).mean() <= 0.83


def test_non_inferiority_agrees_with_a_one_sided_t_test():
    # Reference: scipy.stats.ttest_1samp(d + margin, 0, alternative="greater") at alpha/2;
    # with 200 queries the bootstrap bound and the t bound lead to the same verdict.
    rng = np.random.default_rng(5)
    base = rng.uniform(0, 1, 200)
    for shift, verdict in [(-0.002, YES), (-0.03, NO), (-0.01, CANT_TELL)]:
        other = base + shift + rng.normal(0, 0.03, 200)
        d = decide([SystemFigures("ref", 9, 9, 9), SystemFigures("alt", 1, 1, 1)],
                   [base, other], Limits(margin=0.01), resamples=4000)
        assert d.pairs[0].non_inferior == verdict
        p = sps.ttest_1samp(other - base + 0.01, 0, alternative="greater").pvalue
        assert (p < 0.025) == (verdict == YES)


def test_decision_round_trips_through_the_bundle_reader():
    systems, scores = _three()
    d = decide(systems, scores, resamples=200)
    back = from_json(Decision, json.loads(json.dumps(d.as_dict())), "results.json")
    assert back == d


def test_too_few_queries_cannot_decide():
    d = decide([SystemFigures("a", 1, 1, 1), SystemFigures("b", 2, 2, 2)],
               [[1, 0.5, 0.2], [0.9, 0.5, 0.2]], resamples=200)
    assert d.verdict == CANT_TELL and d.queries_needed == 10
    assert d.headline == ("can't tell: 3 judged queries are too few to decide (fewer than "
                          "10); a leads b by +0.033 ndcg@10; judge at least 10 queries in "
                          "all (7 more)")


def test_too_few_queries_give_no_sample_size_from_their_spread():
    # two queries with the same difference: sd 0, which would size a sample of 2
    d = decide([SystemFigures("a", 1, 1, 1), SystemFigures("b", 2, 2, 2)],
               [[0.5, 0.7], [0.4, 0.6]], resamples=200)
    assert d.verdict == CANT_TELL and d.queries_needed == 10
    assert "sd" not in d.evidence and "too few queries" in d.evidence
    assert (d.pairs[0].queries_to_separate, d.pairs[0].queries_to_confirm) == (None, None)
    one = decide([SystemFigures("a"), SystemFigures("b")], [[0.5], [0.4]], resamples=200)
    assert one.headline.startswith("can't tell: 1 judged query is too few to decide")


def test_bad_input_is_refused():
    with pytest.raises(UsageError, match="at least two systems"):
        decide([SystemFigures("a")], [[0.1, 0.2]])
    with pytest.raises(UsageError, match="margin=-0.1"):
        Limits(margin=-0.1)
    with pytest.raises(UsageError, match="ndcgg@10"):
        Limits(headline="ndcgg@10")


def test_runs_from_files_read_latency_sidecars(tmp_path):
    qrels = {f"q{i}": {f"d{i}": 1} for i in range(12)}
    good = make_run("good", {q: [(f"d{i}", 1.0)] for i, q in enumerate(qrels)})
    half = make_run("half", {q: [(f"d{i}" if i % 2 else "x", 1.0)]
                             for i, q in enumerate(qrels)})
    paths = [tmp_path / "good.run", tmp_path / "half.run"]
    (tmp_path / "good.run.latency.json").write_text(json.dumps(
        {"p50_ms": 2.0, "p95_ms": 3.0, "index_bytes": 1000}))
    d = decide_runs(qrels, [good, half], paths, resamples=200)
    assert d.recommended == "good"
    assert d.notes == ("no latency or index size for half (no RUN.latency.json beside the "
                       "run): the decision weighs quality only for them",)
    assert d.candidates[0].p95_ms == 3.0 and d.candidates[1].p95_ms is None


def test_a_system_without_cost_figures_does_not_dominate_a_measured_one():
    """A fused run has no latency file of its own: better quality with unknown cost is not
    'at least as cheap', so the fast lexical run stays on the frontier; the measured,
    better one still dominates the unmeasured, worse one (weighed on quality only).
    Invented figures (demo only)."""
    rng = np.random.default_rng(11)
    base = rng.uniform(0.3, 0.8, N)
    dense, lexical, fused = base + 0.1, base - 0.05, base + 0.08
    systems = [SystemFigures("dense", 12.0, 20.0, 700_000),
               SystemFigures("lexical", 0.05, 0.08, 200_000),
               SystemFigures("fused")]
    d = decide(systems, np.stack([dense, lexical, fused]), resamples=200)
    dominated = {c.name: c.dominated_by for c in d.candidates}
    assert dominated == {"dense": None, "lexical": None, "fused": "dense"}
