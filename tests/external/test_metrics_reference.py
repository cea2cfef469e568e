"""Every metric equals ir_measures (trec_eval underneath, via pytrec_eval) to 1e-9.

Reference: the ir_measures library with its pytrec_eval provider, i.e. trec_eval's own
C code. Checked on random qrels and runs built to contain score ties, negative and zero
grades, queries missing from the run and run queries missing from the qrels, and on
BM25 runs over the Cranfield collection (human judgments, ../shared/data/cranfield).
"""

from __future__ import annotations

import random

import ir_measures
import numpy as np
import pytest

from trawl.judgments import read_qrels
from trawl.metrics import parse_metrics, score_matrix
from trawl.queries import read_queries
from trawl.runs import Run, make_run

# our name -> ir_measures name; RR@k is derived below (see reference_values)
NAMES = {
    "ndcg@1": "nDCG@1", "ndcg@5": "nDCG@5", "ndcg@10": "nDCG@10", "ndcg@100": "nDCG@100",
    "ndcg": "nDCG", "mrr": "RR", "recall@1": "R@1", "recall@10": "R@10",
    "recall@100": "R@100", "precision@1": "P@1", "precision@5": "P@5", "precision@10": "P@10",
    "map": "AP", "map@10": "AP@10", "hit@1": "Success@1", "hit@10": "Success@10",
}
CUT_RR = {"mrr@1": 1, "mrr@3": 3, "mrr@10": 10}
TOLERANCE = 1e-9


def reference_values(qrels: dict, run: Run, name: str) -> dict[str, float]:
    """Per-query values from ir_measures' pytrec_eval provider (trec_eval's code).

    ir_measures' pytrec_eval provider ignores a cutoff on RR, and its msmarco provider
    (which honours it) breaks score ties another way, so RR@k is taken from trec_eval's
    uncut RR: the first relevant item is at rank 1/RR, hence RR@k = RR if RR >= 1/k, else 0.
    """
    q = [ir_measures.Qrel(qid, item, grade) for qid, items in qrels.items()
         for item, grade in items.items()]
    r = [ir_measures.ScoredDoc(qid, item, score) for qid, pairs in run.results.items()
         for item, score in pairs]
    measure = ir_measures.parse_measure(NAMES.get(name, "RR"))
    got = {m.query_id: m.value for m in ir_measures.pytrec_eval.iter_calc([measure], q, r)}
    if name in CUT_RR:
        k = CUT_RR[name]
        got = {qid: v if v >= 1 / k - 1e-12 else 0.0 for qid, v in got.items()}
    return got


def assert_matches_reference(qrels: dict, run: Run) -> None:
    names = list(NAMES) + list(CUT_RR)
    ours = score_matrix(qrels, run, parse_metrics(names))
    for j, name in enumerate(names):
        ref = reference_values(qrels, run, name)
        want = np.array([ref.get(qid, 0.0) for qid in qrels])  # absent = scored 0, as ours
        worst = np.max(np.abs(ours[:, j] - want))
        assert worst <= TOLERANCE, f"{name}: differs from ir_measures by {worst}"


def random_case(seed: int) -> tuple[dict, Run]:
    rng = random.Random(seed)
    qrels: dict[str, dict[str, int]] = {}
    results = {}
    for q in range(120):
        qid = f"q{q}"
        judged = rng.sample(range(40), rng.randint(1, 12))
        grades = [rng.choice([-1, 0, 0, 1, 1, 2, 3]) for _ in judged]
        if q % 17 == 0:
            grades = [min(g, 0) for g in grades]  # nothing relevant for this query
        qrels[qid] = {f"d{i}": g for i, g in zip(judged, grades)}
        if q % 11 == 0:
            continue  # missing from the run
        shown = rng.sample(range(40), rng.randint(1, 30))
        results[qid] = [(f"d{i}", rng.choice([0.1, 0.25, 0.5, 0.5, 1.0, 2.0])) for i in shown]
    results["only-in-run"] = [("d1", 1.0)]
    return qrels, make_run("random", results)


@pytest.mark.parametrize("seed", range(5))
def test_metrics_equal_ir_measures_on_random_runs_with_ties(seed):
    qrels, run = random_case(seed)
    ties = sum(len(p) - len({s for _, s in p}) for p in run.results.values())
    assert ties > 100  # the case exercises tie-breaking
    assert_matches_reference(qrels, run)


@pytest.fixture(scope="module")
def cranfield_runs(cranfield):
    """BM25 (bm25s, English stop words) top-100 runs on Cranfield: as scored, and with
    scores rounded to one decimal so real rankings carry many ties."""
    import bm25s

    from trawl.catalogue import load_catalogue

    cat = load_catalogue(cranfield / "catalogue.jsonl")
    queries = read_queries(cranfield / "queries.tsv")
    retriever = bm25s.BM25()
    retriever.index(bm25s.tokenize(cat.texts(), stopwords="en", show_progress=False),
                    show_progress=False)
    docs, scores = retriever.retrieve(
        bm25s.tokenize(list(queries.values()), stopwords="en", show_progress=False),
        k=100, show_progress=False)
    ids = cat.ids
    exact = {qid: [(ids[d], float(s)) for d, s in zip(row_d, row_s)]
             for qid, row_d, row_s in zip(queries, docs, scores)}
    coarse = {qid: [(item, round(s, 1)) for item, s in pairs] for qid, pairs in exact.items()}
    return (read_qrels(cranfield / "qrels.txt"), make_run("bm25", exact),
            make_run("bm25-coarse", coarse))


def test_metrics_equal_ir_measures_on_cranfield_bm25(cranfield_runs):
    qrels, exact, _ = cranfield_runs
    assert len(qrels) == 225
    assert_matches_reference(qrels, exact)


def test_metrics_equal_ir_measures_on_cranfield_with_ties(cranfield_runs):
    qrels, _, coarse = cranfield_runs
    ties = sum(len(p) - len({s for _, s in p}) for p in coarse.results.values())
    assert ties > 1000
    assert_matches_reference(qrels, coarse)
