"""BM25 lexical retriever over bm25s: the baseline every encoder has to beat.

Variant: bm25s' ``lucene`` scoring (Robertson & Zaragoza, 2009, with Lucene's idf
``log(1 + (N - df + 0.5) / (df + 0.5))`` and document-length normalisation by ``b``),
tokens from scikit-learn's word pattern, lower-cased, English stop words removed; no
stemming by default, or with ``stem=english`` the Snowball English stemmer (PyStemmer),
as search engines' English analysers do ("profiles" and "profile" then match).

A lexical retriever returns only items that share at least one term with the query
(score > 0: every Lucene idf is positive, so any shared term scores). Filling the top k
with non-matching items would rank them by id alone, which inflates recall at depth and
changes fused runs; fewer than k results is a normal run.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from ..ranking import top_k
from .spec import EncoderSpec

STOPWORDS = "en"
TOKENISER = {"pattern": r"(?u)\b\w\w+\b", "lower": True, "stopwords": "bm25s english",
             "stemmer": None}


def _bm25s() -> Any:
    """bm25s, with its logger back at WARNING: the library sets it to DEBUG, so once
    anything in the process configures logging ('Building index from IDs') reaches the
    user's terminal."""
    import logging

    import bm25s

    logging.getLogger("bm25s").setLevel(logging.WARNING)
    return bm25s


def tokenise(texts: list[str], stem: str = "none") -> list[list[str]]:
    bm25s = _bm25s()
    return bm25s.tokenize(texts, stopwords=STOPWORDS, return_ids=False, show_progress=False,
                          stemmer=_stemmer(stem))


def _stemmer(stem: str) -> Any:
    if stem == "none":
        return None
    import Stemmer

    return Stemmer.Stemmer(stem)


def numbered(docs: list[list[str]]) -> tuple[list[list[int]], dict[str, int]]:
    """Token ids from the sorted vocabulary. bm25s numbers terms in set order, which
    follows Python's per-process string hashing, so the same catalogue would give other
    index files on every build; sorted, a rebuild writes the same bytes (same scores)."""
    vocab = {term: i for i, term in enumerate(sorted({t for doc in docs for t in doc}))}
    return [[vocab[t] for t in doc] for doc in docs], vocab


class LexicalIndex:
    """bm25s term-score matrix plus its vocabulary; scores every item for a query."""

    def __init__(self, model: Any, stem: str) -> None:
        self._model = model
        self._stem = stem

    @classmethod
    def build(cls, texts: list[str], spec: EncoderSpec) -> LexicalIndex:
        bm25s = _bm25s()
        model = bm25s.BM25(k1=spec.k1, b=spec.b, method="lucene")
        model.index(numbered(tokenise(texts, spec.stem)), show_progress=False)
        return cls(model, spec.stem)

    def save(self, folder: Path) -> None:
        self._model.save(str(folder), show_progress=False)

    @classmethod
    def load(cls, folder: Path, spec: EncoderSpec) -> LexicalIndex:
        bm25s = _bm25s()
        return cls(bm25s.BM25.load(str(folder)), spec.stem)

    def scores(self, queries: list[str]) -> np.ndarray:
        """(queries x items) BM25 scores; a query with no indexed term scores 0 everywhere."""
        out = []
        for tokens in tokenise(queries, self._stem):
            ids = self._model.get_tokens_ids(tokens)
            out.append(self._model.get_scores_from_ids(ids))
        return np.asarray(out, dtype=np.float32).reshape(len(queries), -1)

    def matches(self, queries: list[str], k: int,
                ranks: np.ndarray) -> list[tuple[np.ndarray, np.ndarray]]:
        """Per query, (positions, scores) of its best ``k`` matching items in trec_eval
        order (``ranks``: ``ranking.id_ranks`` of the item ids); items scoring 0 share
        no term with the query and are left out, so a list may be shorter than ``k``."""
        out = []
        for row in self.scores(queries):
            hit = np.flatnonzero(row > 0)
            pick = top_k(row[hit], k, ranks, candidates=hit)
            out.append((pick, row[pick]))
        return out
