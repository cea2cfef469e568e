"""Metric names in any case and with the usual spellings, all meaning one metric."""

from __future__ import annotations

import pytest

from trawl.errors import UsageError
from trawl.metrics import Metric, parse_metric, parse_metrics

from .external.test_metrics_reference import NAMES


@pytest.mark.parametrize("ours, theirs", sorted(NAMES.items()) + [("mrr", "RR")])
def test_ir_measures_spellings_parse_to_our_metric(ours, theirs):
    """ir_measures (reference library) names each metric its own way: nDCG@10, P@5, R@100,
    RR, AP, Success@10; every one of them, and its lower and upper case, is accepted."""
    for spelling in (theirs, theirs.lower(), theirs.upper()):
        assert parse_metric(spelling) == parse_metric(ours)


@pytest.mark.parametrize("spelling, want", [
    ("P@5", Metric("precision", 5)), ("p@5", Metric("precision", 5)),
    ("nDCG@10", Metric("ndcg", 10)), ("MRR@10", Metric("mrr", 10)),
    ("RR@10", Metric("mrr", 10)), ("R@100", Metric("recall", 100)),
    ("Recall@100", Metric("recall", 100)), ("MAP", Metric("map")), ("nDCG @ 10", Metric("ndcg", 10)),
])
def test_usual_spellings(spelling, want):
    assert parse_metric(spelling) == want


def test_spellings_of_one_metric_count_once():
    assert parse_metrics(["P@5", "precision@5", "p@5"]) == (Metric("precision", 5),)


@pytest.mark.parametrize("bad", ["P", "p@٥", "x@5", "ndcg@"])
def test_what_is_not_a_metric_is_still_refused(bad):
    with pytest.raises(UsageError):
        parse_metric(bad)
