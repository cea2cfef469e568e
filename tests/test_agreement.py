"""Agreement statistics on hand-computed cases, and `agree` on constructed systems."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from trawl.agreement import agree
from trawl.errors import UsageError
from trawl.judgments import write_qrels
from trawl.runs import make_run, write_run
from trawl.stats import cohen_kappa, kendall_tau_b, spearman_rho, wilson_interval

from .conftest import invoke

Z95 = 1.959963984540054  # standard normal 97.5% quantile, from memory


# --- Wilson interval ------------------------------------------------------------------------

def test_wilson_zero_successes_has_closed_form_upper_bound():
    # With p = 0 the Wilson upper bound simplifies to z^2 / (n + z^2) (algebra on the formula).
    p = wilson_interval(0, 10)
    assert p.low == pytest.approx(0.0, abs=1e-12)
    assert p.high == pytest.approx(Z95 ** 2 / (10 + Z95 ** 2), rel=1e-12)
    assert p.value == 0.0


def test_wilson_is_symmetric_under_swapping_successes_and_failures():
    a, b = wilson_interval(7, 12), wilson_interval(5, 12)
    assert a.low == pytest.approx(1 - b.high) and a.high == pytest.approx(1 - b.low)
    assert a.low < 7 / 12 < a.high


def test_wilson_narrows_with_more_data_and_wider_confidence_widens():
    assert (wilson_interval(90, 100).high - wilson_interval(90, 100).low
            < wilson_interval(9, 10).high - wilson_interval(9, 10).low)
    w95 = wilson_interval(9, 10)
    w99 = wilson_interval(9, 10, alpha=0.01)
    assert w99.low < w95.low and w99.high >= w95.high


def test_wilson_empty_sample_is_undefined_not_zero():
    p = wilson_interval(0, 0)
    assert math.isnan(p.value) and math.isnan(p.low) and math.isnan(p.high)
    assert p.as_dict() == {"successes": 0, "n": 0, "value": None, "low": None, "high": None}


@pytest.mark.parametrize("s, n, alpha", [(5, 3, 0.05), (-1, 3, 0.05), (1, 3, 1.5)])
def test_wilson_rejects_impossible_counts(s, n, alpha):
    with pytest.raises(UsageError):
        wilson_interval(s, n, alpha)


# --- Cohen's kappa --------------------------------------------------------------------------

def test_kappa_textbook_two_by_two():
    # Widely used worked example (from memory): 50 items, both yes 20, A yes / B no 5,
    # A no / B yes 10, both no 15 -> p_o = 0.7, p_e = 0.5, kappa = 0.4.
    a = ["yes"] * 25 + ["no"] * 25
    b = ["yes"] * 20 + ["no"] * 5 + ["yes"] * 10 + ["no"] * 15
    assert cohen_kappa(a, b) == pytest.approx(0.4)


def test_weighted_kappa_hand_computed():
    # Grades 0-2, four items: (0,0) (1,2) (2,2) (2,0). Linear weights |i-j|.
    # Observed weighted disagreement: (0 + 1 + 0 + 2) / 4 = 0.75.
    # Marginals A (1, 1, 2), B (2, 0, 2). Expected = sum_ij |i-j| rA_i rB_j / 16, by row of A:
    # A=0: 0*2 + 1*0 + 2*2 = 4 (x1); A=1: 1*2 + 0 + 1*2 = 4 (x1); A=2: 2*2 + 0 + 0 = 4 (x2)
    # -> 16 / 16 = 1.0, so kappa = 1 - 0.75 / 1.0 = 0.25.
    a, b = [0, 1, 2, 2], [0, 2, 2, 0]
    assert cohen_kappa(a, b, "linear", labels=[0, 1, 2]) == pytest.approx(0.25)


def test_kappa_labels_fix_grade_distance_when_a_grade_is_unused():
    # Grade 1 is never used. Linear weights over the seen labels (0, 2, 3) put 0 and 2 one
    # step apart; over the full scale 0-3 they are two steps apart, as grades say.
    a, b = [0, 2, 3, 3, 0], [0, 3, 3, 2, 2]
    seen = cohen_kappa(a, b, "linear")
    full = cohen_kappa(a, b, "linear", labels=[0, 1, 2, 3])
    # Hand computation for the full scale: observed weighted disagreement (0+1+0+1+2)/5
    # = 0.8; marginals A (2,0,1,2), B (1,0,2,2): expected sum_ij |i-j| rA_i rB_j / 25
    # = (2*(0*1+2*2+3*2) + 1*(2*1+0*2+1*2) + 2*(3*1+1*2+0*2)) / 25 = 34/25 -> 1 - 0.8*25/34.
    assert full == pytest.approx(1 - 0.8 * 25 / 34)
    assert seen != pytest.approx(full)


def test_kappa_perfect_and_undefined():
    assert cohen_kappa([0, 1, 2], [0, 1, 2]) == pytest.approx(1.0)
    assert math.isnan(cohen_kappa([1, 1, 1], [1, 1, 1]))  # chance agreement is total
    assert math.isnan(cohen_kappa([], []))


def test_kappa_rejects_bad_input():
    with pytest.raises(UsageError, match="different numbers"):
        cohen_kappa([0, 1], [0])
    with pytest.raises(UsageError, match="not one of"):
        cohen_kappa([0, 1], [0, 1], weights="cubic")
    with pytest.raises(UsageError, match="not among the allowed labels"):
        cohen_kappa([0, 3], [0, 1], labels=[0, 1, 2])


# --- rank correlations ----------------------------------------------------------------------

def test_tau_b_hand_computed():
    # One discordant pair (2,3) of six: (5 - 1) / 6.
    assert kendall_tau_b([1, 2, 3, 4], [1, 3, 2, 4]) == pytest.approx(4 / 6)
    # Ties: x ties on pair (0,1); concordant 2, discordant 0; tau-b = 2 / sqrt(2 * 3).
    assert kendall_tau_b([1, 1, 2], [1, 2, 3]) == pytest.approx(2 / math.sqrt(6))
    assert kendall_tau_b([1, 2, 3], [3, 2, 1]) == pytest.approx(-1.0)
    assert math.isnan(kendall_tau_b([1, 1, 1], [1, 2, 3]))


def test_spearman_hand_computed():
    # No ties: 1 - 6 * sum(d^2) / (n (n^2 - 1)) with d = (-1, 1, -1, 1, 0) -> 1 - 24/120.
    assert spearman_rho([1, 2, 3, 4, 5], [2, 1, 4, 3, 5]) == pytest.approx(0.8)
    # Ties get average ranks: y ranks (1, 2.5, 2.5) against (1, 2, 3) -> Pearson = 0.8660.
    assert spearman_rho([1, 2, 3], [0, 5, 5]) == pytest.approx(math.sqrt(3) / 2)
    assert math.isnan(spearman_rho([2, 2], [1, 2]))


def test_rank_correlation_needs_equal_lengths():
    with pytest.raises(UsageError, match="equally long"):
        kendall_tau_b([1, 2, 3], [1, 2])
    with pytest.raises(UsageError, match="at least two"):
        spearman_rho([1], [1])


# --- agree ----------------------------------------------------------------------------------

ITEMS = [f"d{i:02d}" for i in range(30)]


def _qrels(n: int, offset: int = 0) -> dict[str, dict[str, int]]:
    return {f"q{q}": {ITEMS[(q * 3 + offset + j) % 30]: 2 if j == 0 else 1 for j in range(3)}
            for q in range(n)}


def _systems(qrels, noises=(0.2, 0.6, 1.2, 2.5, 5.0), seed=1):
    """Runs whose quality falls with their noise level: score = grade + noise."""
    rng = np.random.default_rng(seed)
    runs = []
    for s, noise in enumerate(noises):
        res = {q: [(i, rel.get(i, 0) + rng.normal(0, noise)) for i in ITEMS]
               for q, rel in qrels.items()}
        runs.append(make_run(f"sys{s}", res))
    return runs


def test_same_judgments_agree_perfectly_in_every_resample():
    q = _qrels(30)
    res = agree(q, q, _systems(q), resamples=300)
    assert res.tau.value == 1.0 and (res.tau.low, res.tau.high) == (1.0, 1.0)
    assert res.rho.value == 1.0 and (res.rho.low, res.rho.high) == (1.0, 1.0)
    assert res.flips == ()
    assert res.shared == res.queries_a == res.queries_b == 30
    assert [s.rank_a for s in res.systems] == [1, 2, 3, 4, 5]


def test_judgments_that_invert_quality_reverse_the_ranking_and_list_every_flip():
    good = _qrels(30)
    # B calls relevant exactly the items A does not: the worst system (most noise) now
    # does best and the ranking reverses.
    bad = {q: {i: 1 for i in ITEMS if i not in rel} for q, rel in good.items()}
    res = agree(good, bad, _systems(good), resamples=200)
    assert res.tau.value == pytest.approx(-1.0)
    assert res.rho.value == pytest.approx(-1.0)
    assert len(res.flips) == 10  # every one of the 5 choose 2 pairs
    assert all(f.diff_a > 0 > f.diff_b for f in res.flips)


def test_scores_follow_each_sets_own_queries_and_shared_count():
    a = _qrels(20)
    b = {q: v for q, v in list(a.items())[5:]}
    b.update({"x1": {"d01": 1}, "x2": {"d02": 1}})
    b["empty"] = {"d03": 0}  # no relevant item: cannot rank systems, left out
    runs = _systems({**a, **b})
    res = agree(a, b, runs, resamples=100)
    assert (res.queries_a, res.queries_b, res.shared) == (20, 17, 15)
    from trawl.metrics import per_query
    judged_b = {q: v for q, v in b.items() if q != "empty"}
    expected = per_query(judged_b, runs[2], ["ndcg@10"])["ndcg@10"].mean()
    assert res.systems[2].score_b == pytest.approx(expected)


def test_bootstrap_is_seeded():
    a = _qrels(25)
    b = {q: {i: g for i, g in rel.items() if g == 2} for q, rel in a.items()}
    runs = _systems(a, noises=(0.8, 1.0, 1.2, 1.4))
    one = agree(a, b, runs, resamples=400, seed=3).as_dict()
    assert one == agree(a, b, runs, resamples=400, seed=3).as_dict()
    assert one["bootstrap"] == {"resamples": 400, "seed": 3, "confidence": 0.95,
                                "note": None}
    assert one["spearman_rho"]["low"] <= one["spearman_rho"]["value"] <= 1.0
    assert one["kendall_tau_b"]["low"] < one["kendall_tau_b"]["high"]


def test_flip_shares_follow_each_sets_own_noise():
    from scipy.stats import norm

    from trawl.metrics import per_query

    good = _qrels(40)
    bad = {q: {i: 1 for i in ITEMS if i not in rel} for q, rel in good.items()}
    runs = _systems(good, noises=(1.0, 1.1), seed=4)
    res = agree(good, bad, runs, resamples=4000, seed=2)
    (flip,) = res.flips
    first, second = (runs[0], runs[1]) if flip.first == "sys0" else (runs[1], runs[0])
    d = (per_query(good, first, ["ndcg@10"])["ndcg@10"]
         - per_query(good, second, ["ndcg@10"])["ndcg@10"]).to_numpy()
    # The bootstrap share of replicates whose mean difference keeps its sign approaches
    # Phi(mean / (sd / sqrt(n))) by the central limit theorem (standard result, from
    # memory); 4,000 replicates of 40 queries put it within a few points.
    expected = norm.cdf(d.mean() / (d.std() / np.sqrt(len(d))))
    assert 0.5 < flip.held_a < 1.0
    assert flip.held_a == pytest.approx(expected, abs=0.05)
    assert 0.5 < flip.held_b <= 1.0
    shown = res.as_dict()["flips"][0]
    assert (shown["held_a"], shown["held_b"]) == (flip.held_a, flip.held_b)
    assert agree(good, bad, runs, resamples=0).flips[0].held_a is None


def test_firm_pairs_count_what_each_set_settles_and_the_other_swaps():
    good = _qrels(40)
    bad = {q: {i: 1 for i in ITEMS if i not in rel} for q, rel in good.items()}
    apart = _systems(good)  # noise 0.2 ... 5.0: every pair far apart
    same = agree(good, good, apart, resamples=1000).as_dict()["firm_pairs"]
    assert same == {"threshold": 0.9, "pairs": 10, "settled_a": 10, "swapped_by_b": 0,
                    "settled_b": 10, "swapped_by_a": 0}
    inverted = agree(good, bad, apart, resamples=1000).firm
    assert (inverted.settled_a, inverted.swapped_by_b) == (10, 10)
    assert inverted.swapped_by_a == inverted.settled_b > 0
    # two systems A barely separates (kept in about 60% of replicates, as above): the
    # swap is within A's noise, so A settles nothing and nothing of A's is swapped
    close = agree(good, bad, _systems(good, noises=(1.0, 1.1), seed=4), resamples=4000,
                  seed=2)
    assert (close.firm.settled_a, close.firm.swapped_by_b, len(close.flips)) == (0, 0, 1)
    assert agree(good, bad, apart, resamples=0).as_dict()["firm_pairs"] is None


def test_no_resamples_no_interval():
    q = _qrels(10)
    res = agree(q, q, _systems(q), resamples=0)
    assert res.tau.value == 1.0 and math.isnan(res.tau.low)
    assert res.as_dict()["kendall_tau_b"] == {"value": 1.0, "low": None, "high": None}


def test_agree_rejects_bad_requests():
    q = _qrels(5)
    runs = _systems(q)
    with pytest.raises(UsageError, match="at least two runs"):
        agree(q, q, runs[:1])
    with pytest.raises(UsageError, match="given twice"):
        agree(q, q, [runs[0], runs[0]])
    with pytest.raises(UsageError):
        agree(q, q, runs, metric="bleu@4")
    with pytest.raises(UsageError, match="no query with a relevant item"):
        agree(q, {"q1": {"d01": 0}}, runs)


def test_agree_cli_table_and_json(tmp_path):
    a = _qrels(20)
    bad = {q: {i: 1 for i in ITEMS if i not in rel} for q, rel in a.items()}
    write_qrels(tmp_path / "a.qrels", a)
    write_qrels(tmp_path / "b.qrels", bad)
    paths = []
    for r in _systems(a, noises=(0.2, 5.0)):
        write_run(tmp_path / f"{r.name}.run", r)
        paths.append(tmp_path / f"{r.name}.run")
    res = invoke(["agree", tmp_path / "a.qrels", tmp_path / "b.qrels", *paths,
                  "--resamples", "50"])
    assert res.exit_code == 0, res.output
    lines = res.stdout.splitlines()
    assert lines[0] == (f"ndcg@10 under A = {tmp_path / 'a.qrels'} (20 queries) and "
                        f"B = {tmp_path / 'b.qrels'} (20 queries); 20 queries in both")
    assert "Kendall's tau-b  -1.000  [-1.000, -1.000]" in lines
    assert "Spearman's rho   -1.000  [-1.000, -1.000]" in lines
    assert "(95% bootstrap interval, 50 resamples over queries, seed 0)" in lines
    assert "1 pair(s) change order (better under A, worse under B):" in lines
    assert any(line.startswith("  sys0 vs sys1: ahead by ") and "under A (in 100% of "
               "resamples), behind by" in line for line in lines)
    assert any(line.startswith("Of the 1 pairs of systems, A settles 1 (keeps their order in "
                               "at least 90% of resamples) and B swaps 1 of them; B settles 1 "
                               "and A swaps 1 of them. A swap of a settled pair")
               for line in lines)
    assert "with 2 systems a rank correlation" in res.stdout
    assert "estimates" in lines[-1]
    js = json.loads(invoke(["agree", tmp_path / "a.qrels", tmp_path / "b.qrels", *paths,
                            "--resamples", "50", "--json"]).stdout)
    assert js["kendall_tau_b"]["value"] == -1.0
    assert [f["first"] for f in js["flips"]] == ["sys0"]


def test_agree_cli_bad_metric_exits_2(tmp_path):
    q = _qrels(3)
    write_qrels(tmp_path / "a.qrels", q)
    paths = []
    for r in _systems(q, noises=(1, 2)):
        write_run(tmp_path / f"{r.name}.run", r)
        paths.append(tmp_path / f"{r.name}.run")
    res = invoke(["agree", tmp_path / "a.qrels", tmp_path / "a.qrels", *paths, "-m", "nope"])
    assert res.exit_code == 2
    assert res.stderr.startswith("error: ")


def test_an_unreviewed_copy_is_named_not_taken_for_agreement(tmp_path):
    """The README tour imports a review sheet nobody has filled: every row keeps its
    silver grade, and agree printed tau 1.000 as if people had confirmed silver. A set
    that judges every shared query exactly like the other is called out."""
    a = _qrels(20)
    write_qrels(tmp_path / "a.qrels", a)
    write_qrels(tmp_path / "copy.qrels", {q: a[q] for q in list(a)[:12]})
    changed = {q: dict(items) for q, items in list(a.items())[:12]}
    first = next(iter(changed))
    changed[first] = {i: 1 for i in ITEMS if i not in a[first]}  # one query re-judged
    write_qrels(tmp_path / "changed.qrels", changed)
    paths = []
    for r in _systems(a, noises=(0.2, 5.0)):
        write_run(tmp_path / f"{r.name}.run", r)
        paths.append(tmp_path / f"{r.name}.run")
    copy = invoke(["agree", tmp_path / "a.qrels", tmp_path / "copy.qrels", *paths,
                   "--resamples", "0"])
    assert copy.exit_code == 0, copy.output
    assert copy.stdout.splitlines()[1].startswith(
        "warning: A and B judge all 12 shared queries item for item alike")
    js = json.loads(invoke(["agree", tmp_path / "a.qrels", tmp_path / "copy.qrels", *paths,
                            "--resamples", "0", "--json"]).stdout)
    assert (js["shared_queries"], js["identical_queries"]) == (12, 12)
    other = invoke(["agree", tmp_path / "a.qrels", tmp_path / "changed.qrels", *paths,
                    "--resamples", "0"])
    assert other.exit_code == 0, other.output
    assert "item for item alike" not in other.stdout
