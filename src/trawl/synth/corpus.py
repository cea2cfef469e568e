"""Corpus statistics the styles share: document frequency of each stem, per-item words.

Salience (which words of an item a person would think of) is judged against the whole
catalogue: a word that occurs in every item says nothing about any one of them.
"""

from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass
from types import MappingProxyType
from typing import Mapping

from ..catalogue import Catalogue, Item
from .text import content_words, stem


TITLE_BOOST = 3.0  # a title word counts like three body mentions; common practice, no source


@dataclass(frozen=True)
class ItemWords:
    """An item's content words: surface forms in order, and the stems it contains."""

    title: tuple[str, ...]
    body: tuple[str, ...]
    stems: frozenset[str]


@dataclass(frozen=True)
class Corpus:
    n_items: int
    df: Mapping[str, int]  # stem -> number of items containing it
    words: Mapping[str, ItemWords]  # item id -> its words

    def idf(self, word: str) -> float:
        """Smoothed inverse document frequency of a word's stem (0 for words in every item)."""
        n = self.df.get(stem(word), 0)
        return math.log((self.n_items + 1) / (n + 1))

    def salience(self, item_id: str, title_boost: float = TITLE_BOOST) -> list[tuple[str, float]]:
        """Content words of an item ranked by (body tf + ``title_boost`` if in the title)
        x idf; ties keep first-occurrence order so the ranking is deterministic.

        Titles name what an item is about, so a title word outranks a body word used
        once; words with digits count only when in the title (prices, dates and ids in
        body text are rarely what people search for)."""
        w = self.words[item_id]
        title = set(w.title)
        tf: Counter[str] = Counter(w.body)
        first: dict[str, int] = {}
        for k, word in enumerate(w.title + w.body):
            first.setdefault(word, k)
        scored = [(word, (tf[word] + (title_boost if word in title else 0.0)) * self.idf(word))
                  for word in first
                  if word in title or not any(c.isdigit() for c in word)]
        return sorted(scored, key=lambda p: (-p[1], first[p[0]]))


def item_words(item: Item) -> ItemWords:
    title = tuple(content_words(item.title))
    body = tuple(content_words(item.text))
    return ItemWords(title, body, frozenset(stem(x) for x in title + body))


def build_corpus(catalogue: Catalogue) -> Corpus:
    words = {it.id: item_words(it) for it in catalogue.items}
    df: Counter[str] = Counter()
    for w in words.values():
        df.update(w.stems)
    return Corpus(len(catalogue), MappingProxyType(dict(df)), MappingProxyType(words))
