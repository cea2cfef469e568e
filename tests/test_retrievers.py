"""Encoder specs, top-k tie order and the BM25 scorer on hand-computed examples."""

from __future__ import annotations

import math

import numpy as np
import pytest

from trawl.errors import UsageError
from trawl.retrievers.loading import normalise
from trawl.retrievers.spec import EncoderSpec, parse_spec
from trawl.retrievers.lexical import LexicalIndex, tokenise
from trawl.ranking import id_ranks, top_k
from trawl.runs import rank_order


# --- specs ------------------------------------------------------------------------------------

def test_parse_named_encoders():
    assert parse_spec("minilm") == EncoderSpec("minilm")
    assert parse_spec(" MiniLM-int8 ") == EncoderSpec("minilm-int8")
    assert parse_spec("bm25") == EncoderSpec("bm25", k1=1.5, b=0.75)
    assert parse_spec("bm25;k1=0.9;b=0.4") == EncoderSpec("bm25", k1=0.9, b=0.4)


def test_folder_specs_resolve_paths_and_keep_prefixes_exactly(tmp_path, monkeypatch):
    (tmp_path / "m").mkdir()
    monkeypatch.chdir(tmp_path)
    spec = parse_spec("st:m;query=query: ;document=passage: ")
    assert spec == EncoderSpec("st", str(tmp_path / "m"), "query: ", "passage: ")
    assert parse_spec(str(spec)) == spec           # canonical form round-trips
    assert str(parse_spec("static:m")) == f"static:{tmp_path / 'm'}"
    assert str(parse_spec("bm25;b=0.75")) == "bm25"  # defaults are omitted


@pytest.mark.parametrize("spec, fragment", [
    ("e5", "unknown encoder 'e5'"),
    ("", "empty encoder"),
    ("minilm;query=q: ", "unknown option 'query'"),
    ("bm25;k1=fast", "k1='fast' is not a number"),
    ("bm25;b=2", "b=2 must be between 0 and 1"),
    ("bm25;k1", "is not KEY=VALUE"),
    ("st:", "needs a model folder"),
    ("minilm:x", "takes no folder"),
])
def test_bad_specs_list_the_allowed_forms(spec, fragment):
    with pytest.raises(UsageError) as err:
        parse_spec(spec)
    assert fragment in str(err.value)
    assert ("allowed forms: minilm, minilm-int8, minilm-onnx, minilm-onnx-int8, static:DIR, "
            "st:DIR") in str(err.value)


def test_missing_model_folder_says_how_to_get_one(tmp_path):
    with pytest.raises(UsageError, match=r"model folder .*nope not found; create one with "
                                         r"`trawl distill -o DIR`"):
        parse_spec(f"static:{tmp_path / 'nope'}")


def test_normalise_gives_unit_rows_and_keeps_zero_rows():
    v = normalise(np.array([[3.0, 4.0], [0.0, 0.0]]))
    assert v.dtype == np.float32
    np.testing.assert_allclose(v, [[0.6, 0.8], [0.0, 0.0]], rtol=1e-6)


# --- top-k in trec_eval order ---------------------------------------------------------------------

def test_top_k_matches_sorting_every_pair_by_trec_eval_order():
    rng = np.random.default_rng(7)
    ids = [f"d{i}" for i in rng.permutation(300)]
    scores = rng.integers(0, 20, size=300).astype(np.float32)  # many exact ties
    ranks = id_ranks(ids)
    for k in (1, 5, 37, 300):
        got = [(ids[p], float(scores[p])) for p in top_k(scores, k, ranks)]
        assert got == list(rank_order(zip(ids, scores.tolist())))[:k]


def test_top_k_over_candidates_returns_candidate_positions():
    ids = ["a", "b", "c", "d"]
    got = top_k(np.array([0.5, 0.9, 0.5]), 2, id_ranks(ids), candidates=np.array([0, 3, 2]))
    assert got.tolist() == [3, 2]  # d (0.9), then the 0.5 tie broken by id descending: c > a


# --- BM25 -------------------------------------------------------------------------------------------

def test_bm25_scores_a_hand_computed_example():
    # Variant: Robertson & Zaragoza (2009), "The Probabilistic Relevance Framework: BM25 and
    # Beyond", eq. 3.15 term weight with Lucene's idf log(1 + (N - df + 0.5) / (df + 0.5)) and
    # without the constant (k1 + 1) factor (bm25s "lucene"; Kamphuis et al., ECIR 2020).
    # Stop words ("the", "a", "for") are removed, so the lengths are 2, 3 and 2 tokens.
    docs = ["the bus pass", "bus bus timetable", "a refund form for a fare"]
    k1, b = 1.5, 0.75
    idx = LexicalIndex.build(docs, parse_spec("bm25"))
    n, df, avgdl = 3, 2, (2 + 3 + 3) / 3
    assert tokenise(docs) == [["bus", "pass"], ["bus", "bus", "timetable"],
                              ["refund", "form", "fare"]]
    idf = math.log(1 + (n - df + 0.5) / (df + 0.5))               # ln 1.6 = 0.4700
    d1 = idf * 1 / (1 + k1 * (1 - b + b * 2 / avgdl))              # 0.4700 * 0.4507 = 0.2118
    d2 = idf * 2 / (2 + k1 * (1 - b + b * 3 / avgdl))              # 0.4700 * 0.5494 = 0.2582
    np.testing.assert_allclose(idx.scores(["bus"])[0], [d1, d2, 0.0], rtol=1e-6)
    assert d2 > d1 > 0


def test_bm25_query_of_only_stop_words_or_unknown_terms_scores_zero():
    idx = LexicalIndex.build(["bus pass", "", "refund"], parse_spec("bm25"))
    np.testing.assert_array_equal(idx.scores(["the of and", "zeppelin"]), np.zeros((2, 3)))


def test_bm25_parameters_change_scores():
    docs = ["bus pass", "bus bus bus bus timetable of routes", "refund"]
    flat = LexicalIndex.build(docs, parse_spec("bm25;b=0")).scores(["bus"])[0]
    tuned = LexicalIndex.build(docs, parse_spec("bm25")).scores(["bus"])[0]
    assert flat[1] > tuned[1]  # no length normalisation: the long doc is not penalised


# st pays for importing sentence-transformers and transformers (seconds, cold)
@pytest.mark.parametrize("kind", [pytest.param("st", marks=pytest.mark.slow), "static"])
def test_unloadable_model_folder_is_a_user_error(tmp_path, kind):
    from trawl.retrievers.loading import EncoderLoader

    (tmp_path / "config.json").write_text("{}")
    encoder = EncoderLoader().encoder(parse_spec(f"{kind}:{tmp_path}"))
    with pytest.raises(UsageError, match=f"cannot load a .* model from {tmp_path}: "):
        encoder.encode_documents(["late fees"], 1)
