"""Paraphrase style: say what an item is about in words it does not use.

Starts from a keyword or question query and swaps words for synonyms or hypernyms
(WordNet's most frequent senses) and for the everyday wordings of the user's domain
lexicon. Only *common* replacements are used (Zipf frequency >= ``min_zipf`` from the
``wordfreq`` package): people reach for everyday words, and a rare synonym matches
nothing in any system, which would leave only the lexical part of the comparison.
Several rewordings at different swap rates are offered, so the caller can pick the one
whose overlap with the item fits the target profile.
"""

from __future__ import annotations

import random
from collections.abc import Callable
from dataclasses import dataclass, field

from .lexicon import EMPTY, Lexicon
from .text import is_content, stem, words
from .wordnet import WordNet

MIN_ZIPF = 4.0  # about once per 100,000 words of ordinary text or more often
SWAP_POS = ("n", "a")  # verb synonyms in WordNet are mostly phrasal and off-sense
MAX_WORDS = 2  # longer WordNet lemmas ("force per unit area") read like definitions


@dataclass(frozen=True)
class Rewording:
    """The lexical resources paraphrasing draws on."""

    wordnet: WordNet | None = None
    lexicon: Lexicon = EMPTY
    min_zipf: float = MIN_ZIPF
    hypernyms: bool = False
    phrases: frozenset[tuple[str, str]] = frozenset()  # kept whole: swapping half a term breaks it
    known: Callable[[str], bool] | None = None  # words the catalogue's domain uses
    _memo: dict[str, list[str]] = field(default_factory=dict, compare=False, repr=False)

    def alternatives(self, word: str) -> list[str]:
        """Common synonyms, then (for nouns) hypernyms, of one word in the part of speech
        it is usually used in (no lexicon)."""
        if self.wordnet is None:
            return []
        if word not in self._memo:
            self._memo[word] = self._alternatives(word)
        return self._memo[word]

    def _alternatives(self, word: str) -> list[str]:
        from wordfreq import zipf_frequency

        wn = self.wordnet
        pos = wn.usual_pos(word)
        if pos not in SWAP_POS:
            return []
        own = {stem(word)} | set(wn.base_forms(word, pos))
        out: list[str] = []
        related = wn.synonyms(word, pos) + (wn.hypernyms(word, pos) if self.hypernyms else [])
        for alt in related:
            parts = alt.split()
            if (alt not in out and len(parts) <= MAX_WORDS
                    and not own & ({stem(p) for p in parts} | set(parts))
                    and all(zipf_frequency(p, "en") >= self.min_zipf for p in parts)
                    and (self.known is None or all(self.known(p) for p in parts))):
                out.append(alt)
        return out

    def reword(self, query: str, rate: float, rng: random.Random) -> str:
        """Swap each swappable phrase of ``query`` with probability ``rate``."""
        toks = words(query)
        out: list[str] = []
        k = 0
        lex = self.lexicon
        while k < len(toks):
            for size in range(min(lex.longest, len(toks) - k), 0, -1):
                alts = lex.entries.get(tuple(toks[k:k + size]))
                if alts:
                    if rng.random() < rate:
                        out.append(rng.choice(alts))
                    else:
                        out.extend(toks[k:k + size])
                    k += size
                    break
            else:
                w = toks[k]
                if k + 1 < len(toks) and (w, toks[k + 1]) in self.phrases or \
                        self.wordnet is not None and k + 1 < len(toks) and \
                        self.wordnet.senses(f"{w} {toks[k + 1]}", "n"):
                    out.extend(toks[k:k + 2])
                    k += 2
                    continue
                alts = self.alternatives(w) if is_content(w) else []
                out.append(rng.choice(alts) if alts and rng.random() < rate else w)
                k += 1
        return " ".join(out)


RATES = (0.35, 0.5, 0.65, 0.8, 1.0)
GERUND_TO_BASE = 0.7  # "renewing loans" -> "renew loans": people type tasks in base form
NUMBER_FLIP = 0.5  # singular or plural is the writer's choice, not the item's


def plural(noun: str) -> str:
    """Regular English plural (-s, -es after sibilants, consonant + y -> -ies)."""
    if noun.endswith(("s", "x", "z", "ch", "sh")):
        return noun + "es"
    if noun.endswith("y") and len(noun) > 1 and noun[-2] not in "aeiou":
        return noun[:-1] + "ies"
    return noun + "s"


def retype(query: str, wordnet: WordNet | None, rng: random.Random) -> str:
    """Word forms as a person would type them: gerunds to base verbs, and the head noun
    (the last word) singular or plural afresh, independently of the item's wording.

    The item's own inflections are an accident of how it was written; exact-form
    matching should not get credit for them. Needs WordNet to know verbs and nouns."""
    if wordnet is None:
        return query
    toks = query.split()
    for k, w in enumerate(toks):
        if w.endswith("ing") and w.isalpha() and rng.random() < GERUND_TO_BASE:
            bases = wordnet.base_forms(w, "v")
            if bases and bases[0] != w:
                toks[k] = bases[0]
    if toks and toks[-1].isalpha() and is_content(toks[-1]) and rng.random() < NUMBER_FLIP:
        w = toks[-1]
        bases = wordnet.base_forms(w, "n")
        singular = [b for b in bases if b != w and " " not in b]
        if singular:
            toks[-1] = singular[0]
        elif bases and len(w) > 3 and not w.endswith("s"):
            toks[-1] = plural(w)
    return " ".join(toks)


def paraphrases(base: str, rewording: Rewording, rng: random.Random) -> list[str]:
    """Rewordings of ``base`` at increasing swap rates (duplicates and ``base`` removed)."""
    out: list[str] = []
    for rate in RATES:
        q = retype(rewording.reword(base, rate, rng), rewording.wordnet, rng)
        if q != base and q not in out:
            out.append(q)
    return out
