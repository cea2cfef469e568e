"""BM25 returns only items sharing a term with the query: no zero-score padding.

Reference: bm25s 0.3.16 itself (``BM25(method="lucene").get_scores``, the scores of
every item; Lucene's idf ``log(1 + (N - df + 0.5) / (df + 0.5))`` is positive, so an
item scores above 0 exactly when it holds a query term) and rank-bm25 0.2.2's
``BM25Okapi`` over the same tokens for which items a query touches at all.
"""

from __future__ import annotations

import numpy as np

from trawl.catalogue import Catalogue, Item
from trawl.fusion import reciprocal_rank_fusion
from trawl.index import build_index, open_index, retrieve
from trawl.retrievers.lexical import tokenise
from trawl.runs import make_run

TITLES = ["renew a loan online", "reserve a study room", "pay late fees", "replace a lost card",
          "branch opening hours", "borrow an e-book", "donate books to the branch",
          "print from a laptop", "story time for children", "step-free entrances",
          "renew a lost e-book", "room booking rules"]
QUERIES = {"q1": "renew loan", "q2": "lost card fees", "q3": "quantum chromodynamics",
           "q4": "room", "q5": "branch hours printing"}


def catalogue() -> Catalogue:
    items = tuple(Item(f"lib{i:02d}", "article", t) for i, t in enumerate(TITLES))
    return Catalogue("lib.jsonl", items)


def bm25s_reference(cat: Catalogue) -> dict[str, dict[str, float]]:
    """Per query, every item bm25s scores above 0, with its score."""
    import bm25s

    model = bm25s.BM25(k1=1.5, b=0.75, method="lucene")  # bm25s' and trawl's defaults
    model.index(tokenise(cat.texts()), show_progress=False)
    out = {}
    for qid, text in QUERIES.items():
        scores = model.get_scores(tokenise([text])[0])
        out[qid] = {cat.ids[p]: float(scores[p]) for p in np.flatnonzero(scores > 0)}
    return out


def test_bm25_returns_exactly_the_items_bm25s_scores_above_zero(tmp_path):
    cat = catalogue()
    build_index(cat, "bm25", tmp_path / "idx", cache_dir=tmp_path / "c", quiet=True)
    run = open_index(tmp_path / "idx", cat).search(QUERIES, k=len(cat), quiet=True)
    want = bm25s_reference(cat)
    for qid in QUERIES:
        got = dict(run.results.get(qid, ()))
        assert got.keys() == want[qid].keys(), qid
        assert np.allclose([got[i] for i in want[qid]], list(want[qid].values()), rtol=1e-6)
    assert run.results["q3"] == ()          # no term in the catalogue: no results at all
    assert len(run.results["q4"]) == 2      # "room" is in two titles, not padded to 12


def test_matched_items_are_those_sharing_a_token_per_rank_bm25(tmp_path):
    # rank-bm25 0.2.2 (BM25Okapi) keeps its own document frequencies: an item a query
    # touches has a term frequency above 0 for one of the query's tokens
    from rank_bm25 import BM25Okapi

    cat = catalogue()
    docs = tokenise(cat.texts())
    okapi = BM25Okapi(docs)
    run = retrieve(cat, "bm25", QUERIES, k=len(cat), cache_dir=tmp_path)
    for qid, text in QUERIES.items():
        tokens = tokenise([text])[0]
        touched = {cat.ids[p] for p, freqs in enumerate(okapi.doc_freqs)
                   if any(freqs.get(t, 0) > 0 for t in tokens)}
        assert {i for i, _ in run.results.get(qid, ())} == touched, qid


def test_top_k_of_matches_keeps_bm25s_order(tmp_path):
    cat = catalogue()
    run = retrieve(cat, "bm25", QUERIES, k=2, cache_dir=tmp_path)
    want = bm25s_reference(cat)
    for qid in QUERIES:
        # trec_eval order: score descending, ties (q4's two titles) by id descending
        best = sorted(want[qid].items(), key=lambda kv: (kv[1], kv[0]), reverse=True)
        assert [i for i, _ in run.results.get(qid, ())] == [i for i, _ in best[:2]], qid


def test_fused_run_gives_non_matching_items_nothing_from_bm25(tmp_path):
    # Reciprocal Rank Fusion (Cormack, Clarke & Buettcher, 2009): an item missing from a
    # run gets nothing from it; before the fix bm25's padding gave every item 1/(60 + r)
    cat = catalogue()
    lexical = retrieve(cat, "bm25", {"q4": "room"}, k=len(cat), cache_dir=tmp_path)
    other = make_run("dense", {"q4": [(i, 1.0 - n / 100) for n, i in enumerate(cat.ids)]})
    fused = dict(reciprocal_rank_fusion([other, lexical], depth=len(cat)).results["q4"])
    for rank, item in enumerate(cat.ids, start=1):
        if item not in {"lib01", "lib11"}:   # the two titles with "room"
            assert fused[item] == 1 / (60 + rank)
