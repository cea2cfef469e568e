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
from dataclasses import dataclass, field

from .lexicon import EMPTY, Lexicon
from .text import is_content, stem, words
from .wordnet import WordNet

MIN_ZIPF = 4.0  # about once per 100,000 words of ordinary text or more often
POS_ORDER = ("n", "v", "a", "r")


@dataclass(frozen=True)
class Rewording:
    """The lexical resources paraphrasing draws on."""

    wordnet: WordNet | None = None
    lexicon: Lexicon = EMPTY
    min_zipf: float = MIN_ZIPF
    _memo: dict[str, list[str]] = field(default_factory=dict, compare=False, repr=False)

    def alternatives(self, word: str) -> list[str]:
        """Common synonyms, then hypernyms, of one word (no lexicon)."""
        if self.wordnet is None:
            return []
        if word not in self._memo:
            self._memo[word] = self._alternatives(word)
        return self._memo[word]

    def _alternatives(self, word: str) -> list[str]:
        from wordfreq import zipf_frequency

        own = {stem(word)} | {b for p in POS_ORDER for b in self.wordnet.base_forms(word, p)}
        out: list[str] = []
        for related in (self.wordnet.synonyms, self.wordnet.hypernyms):
            for pos in POS_ORDER:
                for alt in related(word, pos, 1):
                    parts = alt.split()
                    if (alt not in out and not own & {stem(p) for p in parts} | set(parts)
                            and all(zipf_frequency(p, "en") >= self.min_zipf for p in parts)):
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
                alts = self.alternatives(w) if is_content(w) else []
                out.append(rng.choice(alts) if alts and rng.random() < rate else w)
                k += 1
        return " ".join(out)


RATES = (0.35, 0.5, 0.65, 0.8, 1.0)


def paraphrases(base: str, rewording: Rewording, rng: random.Random) -> list[str]:
    """Rewordings of ``base`` at increasing swap rates (duplicates and ``base`` removed)."""
    out: list[str] = []
    for rate in RATES:
        q = rewording.reword(base, rate, rng)
        if q != base and q not in out:
            out.append(q)
    return out
