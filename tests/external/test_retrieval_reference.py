"""Retrieval checked against outside references: sentence-transformers, rank-bm25,
ir_measures (trec_eval's measures) and the Cranfield collection's reference figures."""

from __future__ import annotations

import math

import numpy as np
import pytest

from trawl.catalogue import load_catalogue
from trawl.index import HnswParams, build_index, open_index
from trawl.judgments import read_qrels
from trawl.queries import read_queries
from trawl.retrievers.loading import default_loader
from trawl.retrievers.spec import parse_spec
from trawl.retrievers.lexical import LexicalIndex, tokenise
from trawl.stores import StoreSettings

ir_measures = pytest.importorskip("ir_measures")


@pytest.fixture(scope="module")
def cran(cranfield):
    return (load_catalogue(cranfield / "catalogue.jsonl"), read_queries(cranfield / "queries.tsv"),
            read_qrels(cranfield / "qrels.txt"))


@pytest.fixture(scope="module")
def work(tmp_path_factory):
    return tmp_path_factory.mktemp("retrieval-reference")


def scored(qrels, run, *measures):
    """Aggregate measures from ir_measures (pytrec_eval underneath)."""
    qr = [ir_measures.Qrel(q, d, g) for q, items in qrels.items() for d, g in items.items()]
    docs = [ir_measures.ScoredDoc(q, d, s) for q, pairs in run.results.items() for d, s in pairs]
    return ir_measures.calc_aggregate(list(measures), qr, docs)


# --- dense vectors against the library they come from ---------------------------------------------

@pytest.fixture(scope="module")
def minilm_cranfield(cran, cranfield_minilm_index):
    """All of Cranfield indexed with minilm (the session's index), opened once."""
    return open_index(cranfield_minilm_index, cran[0], "minilm")


@pytest.mark.slow
def test_minilm_index_vectors_equal_sentence_transformers_encode(cran, minilm_cranfield):
    # Reference: sentence-transformers' own encode of the bundled model, loaded separately,
    # on 200 Cranfield items: the 100 longest (cut at the model's 256 tokens) and 100 drawn
    # at random. The ONNX check compares every item with these index vectors.
    from trawl import bundled
    from trawl.retrievers.dense import load_sentence_transformer

    texts = cran[0].texts()
    longest = sorted(range(len(texts)), key=lambda k: (-len(texts[k]), k))[:100]
    rest = sorted(set(range(len(texts))) - set(longest))
    rows = sorted(longest + [int(k) for k in np.random.default_rng(0).choice(rest, 100, False)])
    reference = load_sentence_transformer(str(bundled.model_path())).encode(
        [texts[k] for k in rows], batch_size=32, normalize_embeddings=True,
        convert_to_numpy=True)
    ours = np.load(minilm_cranfield.path / "vectors.npy")
    cosine = np.sum(ours[rows] * reference, axis=1) / np.linalg.norm(reference, axis=1)
    assert len(cosine) == 200 and cosine.min() > 0.9999


@pytest.mark.slow
def test_int8_variant_stays_close_to_fp32(cran, minilm_cranfield, record_property):
    # Regression bound from the value measured on this machine (first 100 Cranfield
    # abstracts, title + text): mean 0.919, min 0.865. The issue measured mean 0.92, min 0.88
    # on ~100-token texts. A drop well below means the quantisation changed.
    fp32 = np.load(minilm_cranfield.path / "vectors.npy")[:100]
    int8 = default_loader().encoder(parse_spec("minilm-int8")).encode_documents(
        cran[0].texts()[:100], 32)
    cosine = np.sum(fp32 * int8, axis=1)
    record_property("int8_cosine_mean", float(cosine.mean()))
    record_property("int8_cosine_min", float(cosine.min()))
    print(f"minilm-int8 vs fp32 cosine: mean {cosine.mean():.4f}, min {cosine.min():.4f}")
    assert cosine.mean() > 0.90 and cosine.min() > 0.84
    assert cosine.mean() < 0.9999  # it really is quantised


# --- BM25 against rank-bm25 -------------------------------------------------------------------------

@pytest.mark.parametrize("stem", ["none", "english"])
def test_bm25_agrees_with_rank_bm25_on_cranfield(cran, stem):
    # Reference: rank-bm25's BM25Okapi, over the same tokens (stemmed by Snowball's
    # English stemmer when stem=english, so both the items' and the queries' terms are). The variants differ in two places only: rank-bm25
    # uses idf log((N - df + 0.5) / (df + 0.5)) with a floor, and multiplies by (k1 + 1).
    # We give it Lucene's idf log(1 + (N - df + 0.5) / (df + 0.5)) (what bm25s "lucene"
    # uses); the (k1 + 1) factor is a constant, so orderings must agree and score ratios
    # must equal k1 + 1 = 2.5.
    from rank_bm25 import BM25Okapi

    cat, queries, _ = cran
    tokens = tokenise(cat.texts(), stem)
    reference = BM25Okapi([t or [""] for t in tokens], k1=1.5, b=0.75)
    n = len(tokens)
    reference.doc_len = [len(t) for t in tokens]          # empty items have length 0
    reference.avgdl = sum(reference.doc_len) / n
    reference.idf = {w: math.log(1 + (n - df + 0.5) / (df + 0.5))
                     for w, df in _doc_freqs(tokens).items()}
    ours = LexicalIndex.build(cat.texts(), parse_spec(f"bm25;stem={stem}"))
    qids = list(queries)[:60]
    mine = ours.scores([queries[q] for q in qids])
    for row, qid in zip(mine, qids):
        ref = reference.get_scores(tokenise([queries[qid]], stem)[0])
        np.testing.assert_allclose(row * 2.5, ref, rtol=2e-5, atol=1e-5)
        top_ref = np.argsort(-ref, kind="stable")[:10]
        top_ours = np.argsort(-row, kind="stable")[:10]
        # float32 vs float64 may swap items whose scores agree to 1e-5; none did here
        assert top_ours.tolist() == top_ref.tolist()


def _doc_freqs(tokens):
    df: dict[str, int] = {}
    for doc in tokens:
        for w in set(doc):
            df[w] = df.get(w, 0) + 1
    return df


# --- Cranfield reference figures ---------------------------------------------------------------------

def test_bm25_reproduces_the_cranfield_reference(cran, work):
    # Reference: ../shared/data/cranfield/README.md (BM25 from bm25s, English stop words):
    # nDCG@10 0.352, MRR@10 0.507, Recall@100 0.709; tolerance from the issue: +/- 0.01.
    cat, queries, qrels = cran
    build_index(cat, "bm25", work / "bm25", quiet=True)
    run = open_index(work / "bm25", cat, "bm25").search(queries, k=100, quiet=True)
    m = scored(qrels, run, ir_measures.nDCG @ 10, ir_measures.RR @ 10, ir_measures.R @ 100)
    assert m[ir_measures.nDCG @ 10] == pytest.approx(0.352, abs=0.01)
    assert m[ir_measures.RR @ 10] == pytest.approx(0.507, abs=0.01)
    assert m[ir_measures.R @ 100] == pytest.approx(0.709, abs=0.01)


@pytest.mark.slow
def test_minilm_reproduces_the_cranfield_reference(cran, minilm_cranfield):
    # Reference: ../shared/data/cranfield/README.md (all-MiniLM-L6-v2, title + text, exact
    # inner product, top 100): nDCG@10 0.385; tolerance from the issue: +/- 0.005.
    # MRR@10 0.543 and Recall@100 0.776 there; we allow +/- 0.01 on those.
    _, queries, qrels = cran
    run = minilm_cranfield.search(queries, k=100, quiet=True)
    m = scored(qrels, run, ir_measures.nDCG @ 10, ir_measures.RR @ 10, ir_measures.R @ 100)
    assert m[ir_measures.nDCG @ 10] == pytest.approx(0.385, abs=0.005)
    assert m[ir_measures.RR @ 10] == pytest.approx(0.543, abs=0.01)
    assert m[ir_measures.R @ 100] == pytest.approx(0.776, abs=0.01)


@pytest.mark.slow
@pytest.mark.parametrize("store", ["fp32", "int8"])
def test_hnsw_recall_at_10_against_exact_on_real_embeddings(cran, work, minilm_cranfield, store):
    # Goal from the issue: recall@10 >= 0.98 at default settings on real embeddings
    # (Cranfield abstracts and queries with minilm), against exact search of the same
    # vectors; a graph over int8 codes is held to the same bar against exact fp32 search
    # too. The vectors come from the cache.
    cat, queries, _ = cran
    settings = StoreSettings(store)
    build_index(cat, "minilm", work / f"hnsw-{store}", ann="hnsw", store=settings, quiet=True)
    build_index(cat, "minilm", work / f"exact-{store}", store=settings, quiet=True)
    approx = open_index(work / f"hnsw-{store}", cat, "minilm", store=settings)
    exact = open_index(work / f"exact-{store}", cat, "minilm", store=settings)
    runs = [ix.search(queries, k=10, quiet=True) for ix in (approx, exact, minilm_cranfield)]

    def recall(a, b):
        return sum(len({i for i, _ in a.results[q]} & {i for i, _ in b.results[q]})
                   for q in queries) / (10 * len(queries))

    print(f"HNSW {HnswParams()} over {store}: recall@10 vs exact {recall(runs[0], runs[1]):.4f}, "
          f"vs exact fp32 {recall(runs[0], runs[2]):.4f}")
    assert recall(runs[0], runs[1]) >= 0.98 and recall(runs[0], runs[2]) >= 0.98


@pytest.mark.slow
def test_distill_runs_offline_and_gives_a_static_encoder(cran, work, distilled_static):
    # Offline: the session fixture refuses every socket while distilling. Reference figure
    # for the distilled encoder on Cranfield (../shared/data/cranfield/README.md,
    # model2vec, 256 dims): nDCG@10 0.274; tolerance +/- 0.01 (our choice: PCA and the
    # SIF weights are deterministic on CPU).
    cat, queries, qrels = cran
    spec = f"static:{distilled_static}"
    info = build_index(cat, spec, work / "static-idx", quiet=True)
    assert info.dim == 256
    run = open_index(work / "static-idx", cat, spec).search(queries, k=100, quiet=True)
    m = scored(qrels, run, ir_measures.nDCG @ 10)
    assert m[ir_measures.nDCG @ 10] == pytest.approx(0.274, abs=0.01)
