"""Metric kernels: names, worked examples, and the trec_eval conventions we follow."""

from __future__ import annotations

import math

import numpy as np
import pytest

from trawl.errors import UsageError
from trawl.metrics import (DEFAULT_METRICS, Metric, dcg, ideal_dcg, parse_metric,
                           parse_metrics, per_query, ranked_gains)
from trawl.runs import make_run


def ranked(grades):
    """A one-query run whose items carry the given grades, in that order."""
    items = [f"d{i}" for i in range(len(grades))]
    run = make_run("r", {"q": [(d, float(len(items) - i)) for i, d in enumerate(items)]})
    qrels = {"q": {d: g for d, g in zip(items, grades)}}
    return qrels, run


# --- names ------------------------------------------------------------------------------------

@pytest.mark.parametrize("name, kind, k", [
    ("ndcg@10", "ndcg", 10), ("nDCG@5", "ndcg", 5), ("mrr@10", "mrr", 10), ("mrr", "mrr", None),
    ("recall@100", "recall", 100), ("precision@5", "precision", 5), ("map", "map", None),
    ("MAP@20", "map", 20), ("hit@1", "hit", 1), (" ndcg ", "ndcg", None),
])
def test_parse_metric_accepts_the_documented_forms(name, kind, k):
    m = parse_metric(name)
    assert m == Metric(kind, k)
    assert m.name == (kind if k is None else f"{kind}@{k}")


@pytest.mark.parametrize("name, says", [
    ("ndcg@0", "cutoff must be >= 1"), ("recall", "needs a cutoff"), ("hit", "needs a cutoff"),
    ("bleu@4", "unknown metric 'bleu@4'"), ("ndcg@ten", "unknown metric"), ("", "unknown"),
    ("ndcg@-1", "unknown metric"),
])
def test_parse_metric_rejects_with_the_allowed_forms(name, says):
    with pytest.raises(UsageError, match=says) as err:
        parse_metric(name)
    if "unknown" in says:
        assert "ndcg@K, mrr@K, recall@K, precision@K, hit@K, map" in str(err.value)


def test_parse_metrics_deduplicates_in_order_and_needs_one():
    assert [m.name for m in parse_metrics(["mrr@10", "ndcg@10", "MRR@10"])] == ["mrr@10",
                                                                               "ndcg@10"]
    assert [m.name for m in parse_metrics(DEFAULT_METRICS)] == list(DEFAULT_METRICS)
    with pytest.raises(UsageError, match="no metrics"):
        parse_metrics([])


# --- worked examples ----------------------------------------------------------------------------

def test_dcg_textbook_example():
    # Worked example from memory (the common textbook / encyclopedia nDCG example):
    # graded list (3, 2, 3, 0, 1, 2) with gain rel / log2(i + 1) gives DCG@6 = 6.861;
    # its ideal order (3, 3, 2, 2, 1, 0) gives IDCG@6 = 7.141, so nDCG@6 = 0.961.
    qrels, run = ranked([3, 2, 3, 0, 1, 2])
    rg = ranked_gains(qrels, run)
    assert dcg(rg, 6)[0] == pytest.approx(6.861, abs=5e-4)
    assert ideal_dcg(rg, 6)[0] == pytest.approx(7.141, abs=5e-4)
    assert per_query(qrels, run, ["ndcg@6"])["ndcg@6"].iloc[0] == pytest.approx(0.961, abs=5e-4)


def test_mrr_three_query_example():
    # Worked example from memory: three queries whose first correct answers sit at ranks
    # 3, 2 and 1 have mean reciprocal rank (1/3 + 1/2 + 1) / 3 = 11/18.
    run = make_run("r", {"a": [("x", 3), ("y", 2), ("hit", 1)],
                         "b": [("x", 3), ("hit", 2), ("y", 1)],
                         "c": [("hit", 3), ("x", 2), ("y", 1)]})
    qrels = {q: {"hit": 1} for q in "abc"}
    assert per_query(qrels, run, ["mrr@10"])["mrr@10"].mean() == pytest.approx(11 / 18)


# --- conventions (hand-computed) ---------------------------------------------------------------

def test_per_query_table_shape_and_order():
    qrels = {"q2": {"a": 1}, "q1": {"b": 2}}
    run = make_run("r", {"q1": [("b", 1.0)], "q2": [("x", 1.0), ("a", 0.5)]})
    df = per_query(qrels, run, ["hit@1", "mrr@10"])
    assert list(df.index) == ["q2", "q1"] and df.index.name == "qid"
    assert list(df.columns) == ["hit@1", "mrr@10"]
    assert df.loc["q2"].tolist() == [0.0, 0.5]
    assert df.loc["q1"].tolist() == [1.0, 1.0]


def test_missing_queries_and_queries_without_positives_score_zero():
    qrels = {"found": {"a": 1}, "absent": {"a": 1}, "nothing-relevant": {"a": 0, "b": -1}}
    run = make_run("r", {"found": [("a", 1.0)], "nothing-relevant": [("a", 1.0)],
                         "not-judged": [("a", 1.0)]})
    df = per_query(qrels, run, ["ndcg@10", "mrr@10", "recall@10", "precision@1", "map",
                                "hit@1"])
    assert list(df.index) == ["found", "absent", "nothing-relevant"]
    assert df.loc["found"].tolist() == [1.0] * 6
    assert df.loc["absent"].tolist() == [0.0] * 6
    assert df.loc["nothing-relevant"].tolist() == [0.0] * 6


def test_ties_are_broken_by_item_id_descending():
    # trec_eval's rule: equal scores rank the larger item id first.
    qrels = {"q": {"a": 1}}
    run = make_run("r", {"q": [("a", 1.0), ("b", 1.0)]})
    assert per_query(qrels, run, ["mrr@10"])["mrr@10"].iloc[0] == 0.5


def test_cutoffs_precision_recall_map_by_hand():
    # grades by rank: 1 0 2 0 0 | 1 ; a further relevant item is never retrieved
    qrels, run = ranked([1, 0, 2, 0, 0, 1])
    qrels["q"]["unretrieved"] = 1
    df = per_query(qrels, run, ["precision@5", "precision@10", "recall@5", "map", "map@3",
                                "hit@2", "mrr@1"])
    row = df.iloc[0]
    assert row["precision@5"] == pytest.approx(2 / 5)
    assert row["precision@10"] == pytest.approx(3 / 10)  # divides by k, not by 6 retrieved
    assert row["recall@5"] == pytest.approx(2 / 4)
    assert row["map"] == pytest.approx((1 / 1 + 2 / 3 + 3 / 6) / 4)
    assert row["map@3"] == pytest.approx((1 / 1 + 2 / 3) / 4)
    assert row["hit@2"] == 1.0
    assert row["mrr@1"] == 1.0


def test_ndcg_uses_grades_as_gains_and_ignores_negative_grades():
    qrels = {"q": {"bad": -2, "good": 2, "ok": 1}}
    run = make_run("r", {"q": [("bad", 3.0), ("ok", 2.0), ("good", 1.0)]})
    got = per_query(qrels, run, ["ndcg@3"])["ndcg@3"].iloc[0]
    want = (0 + 1 / math.log2(3) + 2 / math.log2(4)) / (2 + 1 / math.log2(3))
    assert got == pytest.approx(want)


def test_ndcg_ideal_counts_judged_items_that_were_not_retrieved():
    qrels = {"q": {"a": 1, "b": 2}}
    run = make_run("r", {"q": [("a", 1.0)]})
    assert per_query(qrels, run, ["ndcg@10"])["ndcg@10"].iloc[0] == pytest.approx(
        1 / (2 + 1 / math.log2(3)))


def test_depth_only_what_metrics_need():
    qrels, run = ranked([0] * 30 + [1])
    assert ranked_gains(qrels, run, 10).gains.shape == (1, 10)
    assert ranked_gains(qrels, run).gains.shape == (1, 31)
    df = per_query(qrels, run, ["mrr", "mrr@10"])
    assert df.iloc[0].tolist() == [1 / 31, 0.0]
    assert np.isfinite(df.to_numpy()).all()
