"""Corpus statistics the styles share: document frequency of each stem, per-item words.

Salience (which words of an item a person would think of) is judged against the whole
catalogue: a word that occurs in every item says nothing about any one of them.
"""

from __future__ import annotations

import math
import re
from collections import Counter
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping

from ..catalogue import Catalogue, Item
from .text import TOKEN, content_words, is_content, stem, words
from .wordnet import WordNet


ACTION_WEIGHT = 0.3  # common practice, no source: queries name things more than actions
PHRASE_MIN_ITEMS = 3  # a word pair in 3+ items is a term of the trade; common practice, no source
TITLE_BOOST = 3.0  # a title word counts like three body mentions; common practice, no source
# A word capitalised in this share of its mid-sentence uses is a name; common practice, no source
NAME_SHARE = 0.8
NAME_USES = 2  # ... and at least this often (one capitalised use may be a button label)
SENTENCE_END = re.compile(r"[.!?:;\n]\s*$")


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
    weight: Mapping[str, float] = field(default_factory=dict)  # word -> part-of-speech weight
    phrases: frozenset[tuple[str, str]] = frozenset()  # recurring two-word terms
    names: frozenset[str] = frozenset()  # words the catalogue writes capitalised (see find_names)
    adverbs: frozenset[str] = frozenset()  # words usually adverbs ("still", "again")

    def known(self, word: str) -> bool:
        """Whether the catalogue uses ``word`` (by stem) anywhere."""
        return stem(word) in self.df

    def idf(self, word: str) -> float:
        """Smoothed inverse document frequency of a word's stem (0 for words in every item)."""
        n = self.df.get(stem(word), 0)
        return math.log((self.n_items + 1) / (n + 1))

    def salience(self, item_id: str, title_boost: float = TITLE_BOOST) -> list[tuple[str, float]]:
        """Content words of an item ranked by (body tf + ``title_boost`` if in the title)
        x idf; ties keep first-occurrence order so the ranking is deterministic.

        Titles name what an item is about, so a title word outranks a body word used
        once; words with digits count only when in the title (prices, dates and ids in
        body text are rarely what people search for); words usually used as verbs or
        adverbs count less (``weight``), since people search for things, not actions."""
        w = self.words[item_id]
        title = set(w.title)
        tf: Counter[str] = Counter(w.body)
        first: dict[str, int] = {}
        for k, word in enumerate(w.title + w.body):
            first.setdefault(word, k)
        scored = [(word, (tf[word] + (title_boost if word in title else 0.0)) * self.idf(word)
                   * self.weight.get(word, 1.0))
                  for word in first
                  if word in title or not any(c.isdigit() for c in word)]
        return sorted(scored, key=lambda p: (-p[1], first[p[0]]))


def item_words(item: Item) -> ItemWords:
    title = tuple(content_words(item.title))
    body = tuple(content_words(item.text))
    return ItemWords(title, body, frozenset(stem(x) for x in title + body))


def build_corpus(catalogue: Catalogue, wordnet: WordNet | None = None) -> Corpus:
    """Statistics of ``catalogue``; with WordNet, words whose usual part of speech is
    verb or adverb get weight ``ACTION_WEIGHT`` in salience."""
    words = {it.id: item_words(it) for it in catalogue.items}
    df: Counter[str] = Counter()
    for w in words.values():
        df.update(w.stems)
    pairs: Counter[tuple[str, str]] = Counter()
    for it in catalogue.items:
        pairs.update(set(_adjacent_pairs(f"{it.title}\n{it.text}")))
    phrases = frozenset(p for p, n in pairs.items() if n >= PHRASE_MIN_ITEMS)
    weight: dict[str, float] = {}
    adverbs: set[str] = set()
    if wordnet is not None:
        for w in words.values():
            for word in w.title + w.body:
                if word not in weight:
                    pos = wordnet.usual_pos(word)
                    weight[word] = ACTION_WEIGHT if pos in ("v", "r") else 1.0
                    if pos == "r":
                        adverbs.add(word)
    return Corpus(len(catalogue), MappingProxyType(dict(df)), MappingProxyType(words),
                  MappingProxyType(weight), phrases, find_names(catalogue),
                  frozenset(adverbs))


def find_names(catalogue: Catalogue) -> frozenset[str]:
    """Words (lower-cased) the catalogue capitalises in at least NAME_SHARE of their uses
    inside a sentence: place, product and month names and acronyms ("Tarrowby", "Flex",
    "March", "VAT"). Nobody types "marches" for "March" or a synonym for a product's
    name, so paraphrasing leaves them as they are. Sentence-initial words say nothing,
    and neither do Title Case titles."""
    upper: Counter[str] = Counter()
    lower: Counter[str] = Counter()
    for it in catalogue.items:
        texts = [it.text] if _title_case(it.title) else [it.title, it.text]
        for text in texts:
            end = 0  # where the previous token ended
            for m in TOKEN.finditer(text):
                # what decides a sentence start lies between the previous token and this one
                gap = text[end:m.start()]
                first = end == 0 and not gap.strip()
                end = m.end()
                if first or not m.group()[0].isalpha() or SENTENCE_END.search(gap):
                    continue
                (upper if m.group()[0].isupper() else lower)[m.group().lower()] += 1
    return frozenset(w for w, n in upper.items()
                     if n >= NAME_USES and n >= NAME_SHARE * (n + lower[w]))


def _title_case(title: str) -> bool:
    long = [w for w in TOKEN.findall(title) if len(w) > 3 and w[0].isalpha()]
    return len(long) >= 2 and sum(w[0].isupper() for w in long) > len(long) / 2


def _adjacent_pairs(text: str) -> list[tuple[str, str]]:
    """Pairs of content words that follow each other directly (no stop word between),
    within one line; candidates for multi-word terms such as "boundary layer"."""
    out = []
    for line in text.split("\n"):
        toks = words(line)
        out.extend((a, b) for a, b in zip(toks, toks[1:]) if is_content(a) and is_content(b))
    return out
