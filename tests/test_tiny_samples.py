"""Statistics on tiny samples: no interval or bootstrap p-value from a handful of queries,
the exact sign-flip distribution, and a warning at every level (all queries and each type).

Reference for the exact p-values: scipy.stats.permutation_test with
``permutation_type="samples"`` (paired sign flips), which enumerates every pattern when
``n_resamples`` is at least 2^n.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy import stats as scipy_stats

from trawl.catalogue import Catalogue, Item
from trawl.compare import compare_scores
from trawl.runs import make_run
from trawl.scores import score_runs
from trawl.stats import randomisation_test

# reciprocal ranks: query i finds its item first in "a" and at rank i + 2 in "b"
ITEMS = tuple(Item(f"it{i}", "faq" if i < 3 else "form", f"title {i}") for i in range(12))


def collection(n: int):
    qrels = {f"q{i}": {f"it{i}": 1} for i in range(n)}
    a = make_run("a", {f"q{i}": [(f"it{i}", 1.0)] for i in range(n)})
    b = {}
    for i in range(n):
        ahead = [f"it{x}" for x in range(12) if x != i][:i + 1]
        b[f"q{i}"] = [(item, 1.0 - r / 100) for r, item in enumerate([*ahead, f"it{i}"])]
    return qrels, [a, make_run("b", b)]


def mean_diff(x, y, axis=-1):
    return np.mean(x, axis=axis) - np.mean(y, axis=axis)


def test_one_query_gets_no_interval_but_a_reason():
    # before: "0.240 (0.240 to 0.240)", an interval of width 0 from a single query
    qrels, runs = collection(1)
    rep = score_runs(qrels, runs, ["mrr@10"], resamples=1000)
    row = rep.as_dict()["scores"][0]
    assert (row["n"], row["low"], row["high"], row["note"]) == (1, None, None,
                                                                 "too few queries")
    assert ("all queries: only 1 query (fewer than 10): no bootstrap interval "
            "(too few queries)") in rep.warnings
    json.dumps(rep.as_dict(), allow_nan=False)  # no NaN in the JSON


def test_two_queries_get_no_bootstrap_p_and_the_exact_randomisation_p():
    # before: "p boot <0.001" from two queries
    qrels, runs = collection(2)
    comp = compare_scores(score_runs(qrels, runs, ["mrr@10"]), resamples=1000)
    row = comp.as_dict()["rows"][0]
    assert (row["low"], row["high"], row["p_bootstrap"], row["note"]) == (
        None, None, None, "too few queries")
    # differences 1/2 and 2/3: of the 4 sign patterns only (+,+) and (-,-) reach |7/6|
    assert row["p_randomisation"] == 0.5
    assert any(w.startswith("all queries: only 2 queries (fewer than 20)") and
               "cannot fall below 0.5" in w for w in comp.warnings)


def test_every_level_is_warned_about_not_only_types():
    # 12 queries overall (enough), 3 of type faq and 9 of type form (too few)
    qrels, runs = collection(12)
    rep = score_runs(qrels, runs, ["mrr@10"], Catalogue("c.jsonl", ITEMS), resamples=500)
    rows = {r["type"]: r for r in rep.score_rows() if r["run"] == "a"}
    assert rows[None]["note"] is None and rows[None]["low"] is not None
    assert rows["faq"]["note"] == rows["form"]["note"] == "too few queries"
    few = [w for w in rep.warnings if "fewer than" in w]
    assert few == ["type 'faq': only 3 queries (fewer than 10): no bootstrap interval "
                   "(too few queries)",
                   "type 'form': only 9 queries (fewer than 10): no bootstrap interval "
                   "(too few queries)"]
    from trawl.stats import MIN_QUERIES

    assert MIN_QUERIES == 10


def test_one_query_sign_flip_p_is_one_by_hand():
    # scipy.stats.permutation_test needs two observations; by hand: the two sign patterns
    # of a single difference, +d and -d, are both as extreme as the observed one
    for resamples in (1, 1000):
        assert randomisation_test([0.7], [0.3], resamples=resamples) == 1.0


@pytest.mark.parametrize("d", [[0.5, 2 / 3], [0.3, -0.1], [0.2, 0.2], [0.1, 0.4, -0.2]])
@pytest.mark.parametrize("resamples", [1, 3, 1000])
def test_exact_sign_flip_p_matches_scipy_permutation_test(d, resamples):
    # exact whatever the number of resamples asked for: before, resamples=1 or 3 with two
    # queries drew random signs and gave p = 0.5 or 1 by chance
    a = np.asarray(d, dtype=float)
    b = np.zeros_like(a)
    ref = scipy_stats.permutation_test((a, b), mean_diff, permutation_type="samples",
                                       vectorized=True, n_resamples=2 ** len(d),
                                       alternative="two-sided").pvalue
    assert randomisation_test(a, b, resamples=resamples, seed=7) == pytest.approx(ref, abs=1e-12)


def test_agreement_of_two_queries_gives_no_interval_but_the_reason():
    # before: "[-1.000, 1.000]" from a bootstrap over two queries
    from trawl.agreement import agree

    qrels_a = {"q0": {"it0": 1}, "q1": {"it1": 1}}
    qrels_b = {"q0": {"it0": 1}, "q1": {"it0": 1}}
    runs = [make_run(n, {q: [(i, 2.0), (j, 1.0)] for q, (i, j) in pairs.items()})
            for n, pairs in (("r1", {"q0": ("it0", "it1"), "q1": ("it1", "it0")}),
                             ("r2", {"q0": ("it1", "it0"), "q1": ("it0", "it1")}),
                             ("r3", {"q0": ("it0", "it1"), "q1": ("it0", "it1")}))]
    d = agree(qrels_a, qrels_b, runs, metric="mrr@10", resamples=500).as_dict()
    assert d["bootstrap"]["note"] == "too few queries"
    assert (d["kendall_tau_b"]["low"], d["kendall_tau_b"]["high"]) == (None, None)
