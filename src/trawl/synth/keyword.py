"""Keyword style: 1-4 salient words of an item, the way people type into a search box.

Words are drawn from the item's most salient content words (tf-idf against the whole
catalogue), with chance proportional to salience, and kept in the order they first
appear in the item. A draw that reproduces the title's content words is redrawn smaller,
since copying the title is not what people do.
"""

from __future__ import annotations

import random

from ..catalogue import Item
from .corpus import Corpus
from .text import is_content, words

POOL = 8  # how many top-salience words a query may draw from
LENGTHS = (1, 2, 3, 4)
LENGTH_WEIGHTS = (0.15, 0.4, 0.3, 0.15)  # common practice, no source: most typed queries are 2-3 words


def salient_terms(item: Item, corpus: Corpus, rng: random.Random, n: int | None = None
                  ) -> list[str]:
    """Draw ``n`` (or a random 1-4) salient content words of ``item``, in item order."""
    ranked = corpus.salience(item.id)[:POOL]
    if not ranked:
        return []
    if n is None:
        n = rng.choices(LENGTHS, LENGTH_WEIGHTS)[0]
    n = min(n, len(ranked))
    pool = list(ranked)
    chosen: list[str] = []
    while len(chosen) < n:
        total = sum(s for _, s in pool) or 1.0
        r, acc = rng.random() * total, 0.0
        for k, (word, s) in enumerate(pool):
            acc += s
            if acc >= r:
                chosen.append(word)
                del pool[k]
                break
        else:
            chosen.append(pool.pop()[0])
    order = corpus.words[item.id].title + corpus.words[item.id].body
    chosen.sort(key=order.index)
    title = list(dict.fromkeys(corpus.words[item.id].title))
    if len(chosen) > 1 and chosen == title:
        chosen.pop(rng.randrange(len(chosen)))
    return chosen


def keyword_query(item: Item, corpus: Corpus, rng: random.Random) -> str:
    return " ".join(salient_terms(item, corpus, rng))


# Longest run of title words a query keeps. A title states its item's topic as a whole:
# a window of a long title ("effect of jet noise on aircraft structures" -> "jet noise
# aircraft") keeps exact words but loses what ties them, and exact-word matching wins
# such fragments. Measured in bench/silver_agreement.py (DEVELOPERS.md): windows of 3-5
# words put bm25 ahead of minilm on Cranfield silver, unlike people's judgments; whole
# titles up to 12 content words ranked all five systems there as people did. The cap only
# guards against run-on titles; short product titles are whole either way.
MAX_PHRASE = 12


def _title_words(item: Item, corpus: Corpus) -> list[str]:
    """The title's content words, once each, without adverbs ("Can I still pay cash on
    the bus?" -> "pay cash bus": an adverb without its sentence reads as noise); "of"
    between two of them stays ("power of attorney" is no "power attorney")."""
    toks = words(item.title)
    out: list[str] = []
    for k, w in enumerate(toks):
        if w in corpus.adverbs:
            continue
        if is_content(w) and w not in out:
            out.append(w)
        elif w == "of" and 0 < k < len(toks) - 1 and out and out[-1] != "of" \
                and is_content(toks[k - 1]) and is_content(toks[k + 1]):
            out.append(w)
    return out


def title_phrase(item: Item, corpus: Corpus, rng: random.Random) -> list[str]:
    """The title's content words in order (a run of 3 to MAX_PHRASE words around its
    most salient word when longer); salient terms when the title has no content words.

    Titles are written for people to read, so their words hang together; a query built
    from them stays meaningful after paraphrasing, where a bag of rare words does not
    (and would hand every comparison to exact-word matching)."""
    title = _title_words(item, corpus)
    if not title:
        return salient_terms(item, corpus, rng)
    if len(title) <= MAX_PHRASE:
        return title
    rank = {w: k for k, (w, _) in enumerate(corpus.salience(item.id))}
    anchor = min(range(len(title)), key=lambda k: rank.get(title[k], len(rank)))
    size = rng.randint(3, MAX_PHRASE)
    start = rng.randint(max(0, anchor - size + 1), min(anchor, len(title) - size))
    return title[start:start + size]
