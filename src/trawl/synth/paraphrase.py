"""Paraphrase style: say what an item is about in words it does not use.

Starts from the title's run of words, swaps words for WordNet synonyms that keep the sense
(see ``Rewording``) and for the everyday wordings of the user's domain
lexicon, puts verbs and the head noun in the forms people type (``retype``) and leaves
out the item's rarest words (``drop_rarest``). Only *common* replacements are used
(Zipf frequency >= ``min_zipf`` from the ``wordfreq`` package): people reach for
everyday words, and a rare synonym matches nothing in any system, which would leave only
the lexical part of the comparison. Several rewordings at different swap rates are
offered, so the caller can pick the one whose overlap with the item fits the target
profile.
"""

from __future__ import annotations

import random
from collections.abc import Callable, Collection
from dataclasses import dataclass, field

from .lexicon import EMPTY, Lexicon
from .text import is_content, stem, words
from .wordnet import WordNet

MIN_ZIPF = 4.0  # about once per 100,000 words of ordinary text or more often
SWAP_POS = ("n", "a")  # verb synonyms in WordNet are mostly phrasal and off-sense
MAX_WORDS = 2  # longer WordNet lemmas ("force per unit area") read like definitions
MIN_SWAP_LEN = 3  # two-letter words are abbreviations: "pt" (part) is no "platinum"
MIN_USES = 2  # tagged uses a replacement needs: WordNet-only terms ("trial run") read oddly
DOMINANT = 0.7  # share of a word's tagged uses its main sense needs for a blind swap


@dataclass(frozen=True)
class Rewording:
    """The lexical resources paraphrasing draws on.

    A WordNet swap must keep the meaning, or it tells us nothing about how people who
    use their own words would fare: a wrong-sense synonym ("plate" -> "home base")
    confuses every system that reads meaning and leaves the rare exact words for
    lexical matching. So a word is swapped only when one sense holds most of its uses
    in WordNet's tagged corpus, and a replacement only when that sense is its own
    dominant one too, so a reader takes it the same way. (Choosing the sense from the
    item's words, simplified Lesk, was tried: on short items half its choices were wrong,
    "shapes" -> "human body", and agreement with people did not move.)"""

    wordnet: WordNet | None = None
    lexicon: Lexicon = EMPTY
    min_zipf: float = MIN_ZIPF
    hypernyms: bool = False
    phrases: frozenset[tuple[str, str]] = frozenset()  # kept whole: swapping half a term breaks it
    known: Callable[[str], bool] | None = None  # words the catalogue's domain uses
    names: frozenset[str] = frozenset()  # kept as written: no synonym for "Tarrowby" or "March"
    _memo: dict[str, list[str]] = field(default_factory=dict, compare=False, repr=False)

    def sense(self, word: str, pos: str) -> int | None:
        """The offset of the sense ``word`` is read in, or None when it has no dominant
        one (see ``_dominant``) or its base forms disagree on it."""
        bases = self.wordnet.base_forms(word, pos) if self.wordnet else []
        if not bases:
            return None
        # "receipts" is a lemma of its own (revenue) besides the plural of "receipt":
        # a word whose readings disagree has no sense to keep
        found = {_dominant(self.wordnet, b, pos) for b in bases}
        return found.pop() if len(found) == 1 else None

    def alternatives(self, word: str) -> list[str]:
        """Common words that mean what ``word`` means: synonyms, then (when enabled)
        hypernyms, of its dominant sense in the part of speech it is usually used in
        (no lexicon); none for words under MIN_SWAP_LEN letters."""
        if self.wordnet is None or len(word) < MIN_SWAP_LEN:
            return []
        pos = self.wordnet.usual_pos(word)
        if pos not in SWAP_POS:
            return []
        if word not in self._memo:
            off = self.sense(word, pos)
            self._memo[word] = [] if off is None else self._alternatives(word, pos, off)
        return self._memo[word]

    def _alternatives(self, word: str, pos: str, offset: int) -> list[str]:
        wn = self.wordnet
        syn = wn.synset(pos, offset)
        if syn is None or any(_numeral(x) for x in syn.lemmas):
            return []  # numbers: "three" -> "iii" is no paraphrase
        own = {stem(word)} | set(wn.base_forms(word, pos))
        targets = [(syn, offset)]
        if self.hypernyms:
            targets += [(wn.synset(p, o), o) for p, o in syn.hypernyms if p == pos]
        out: list[str] = []
        for target, off in targets:
            for alt in target.lemmas if target else ():
                parts = alt.split()
                if (alt not in out and len(parts) <= MAX_WORDS
                        and not own & ({stem(p) for p in parts} | set(parts))
                        and _dominant(wn, alt, pos) == off
                        and sum(wn.sense_counts(alt, pos)) >= MIN_USES
                        and all(_zipf(p) >= self.min_zipf for p in parts)
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
                alts = self.alternatives(w) if is_content(w) and w not in self.names else []
                out.append(rng.choice(alts) if alts and rng.random() < rate else w)
                k += 1
        return " ".join(out)


def _dominant(wn: WordNet, lemma: str, pos: str) -> int | None:
    """``lemma``'s sense when it has one, or one that holds DOMINANT of its tagged uses."""
    offsets = wn.senses(lemma, pos)
    if len(offsets) == 1:
        return offsets[0]
    counts = wn.sense_counts(lemma, pos)
    total = sum(counts)
    if offsets and total and counts[0] >= DOMINANT * total:
        return offsets[0]
    return None


def _numeral(lemma: str) -> bool:
    return lemma.replace(".", "").isdigit()


DROP_ONE_AT, DROP_TWO_AT = 3, 4  # item words in a query before its rarest one or two go
RATES = (0.35, 0.5, 0.65, 0.8, 1.0)
GERUND_TO_BASE = 0.7  # "renewing loans" -> "renew loans": people type tasks in base form
NUMBER_FLIP = 0.5  # singular or plural is the writer's choice, not the item's
# A re-formed word must occur once per million words or more; common practice, no source
MIN_FORM_ZIPF = 3.0


def plural(noun: str) -> str:
    """Regular English plural (-s, -es after sibilants, consonant + y -> -ies)."""
    if noun.endswith(("s", "x", "z", "ch", "sh")):
        return noun + "es"
    if noun.endswith("y") and len(noun) > 1 and noun[-2] not in "aeiou":
        return noun[:-1] + "ies"
    return noun + "s"


def retype(query: str, wordnet: WordNet | None, rng: random.Random,
           names: Collection[str] = ()) -> str:
    """Word forms as a person would type them: gerunds to base verbs, and the head noun
    (the last word) singular or plural afresh, independently of the item's wording.
    (Turning only a leading gerund, so "thermal buckling" stays, read better but let
    bm25 match more exact forms: Cranfield tau 0.60-0.80 instead of 0.80-1.00;
    bench/results/2026-12-02-silver-shapes.md, run A7.)

    The item's own inflections are an accident of how it was written; exact-form
    matching should not get credit for them. Needs WordNet to know verbs and nouns.
    Names keep their number ("March" never becomes "marches"), and so does a head noun
    whose other number is rare in ordinary text ("data" -> "datum")."""
    if wordnet is None:
        return query
    toks = query.split()
    for k, w in enumerate(toks):
        if w.endswith("ing") and w.isalpha() and not wordnet.senses(w, "a") \
                and rng.random() < GERUND_TO_BASE:
            bases = wordnet.base_forms(w, "v")
            if bases and bases[0] != w:
                toks[k] = bases[0]
    w = toks[-1] if toks else ""
    if w.isalpha() and is_content(w) and w not in names and rng.random() < NUMBER_FLIP:
        bases = wordnet.base_forms(w, "n")
        # a base form rarer than the word itself is no singular ("pass" is not "pas"s)
        singular = [b for b in bases if b != w and " " not in b
                    and wordnet.tagged(b, "n") >= wordnet.tagged(w, "n")]
        flipped = (singular[0] if singular else
                   plural(w) if bases and len(w) > 3 and not w.endswith(("s", "ing"))
                   else None)  # no "measurings"
        if flipped and _zipf(flipped) >= MIN_FORM_ZIPF:
            toks[-1] = flipped
    return " ".join(toks)


def _zipf(word: str) -> float:
    """How common ``word`` is in ordinary English (wordfreq's Zipf scale)."""
    from wordfreq import zipf_frequency

    return zipf_frequency(word, "en")


def drop_rarest(query: str, item_stems: Collection[str], idf: Callable[[str], float]
                ) -> str:
    """Leave out the item's rarest word (two when four or more remain): people seldom
    know an item's most specific term before they have found it, and a query that keeps
    every rare word hands the search to exact-word matching. Only words the item uses
    count, at least two of them stay, and the last word stays: it is the phrase's head,
    what the phrase is about ("effect of jet noise on aircraft structures" without
    "structures" is about nothing)."""
    toks = query.split()
    mine = [k for k, w in enumerate(toks) if is_content(w) and stem(w) in item_stems]
    n = 2 if len(mine) >= DROP_TWO_AT else 1 if len(mine) >= DROP_ONE_AT else 0
    droppable = [k for k in mine if k != len(toks) - 1]
    gone = set(sorted(droppable, key=lambda k: (-idf(toks[k]), k))[:n])
    # a joining "of" goes with either word it joined ("proof of address" -> "address")
    gone |= {j for k in gone for j in (k - 1, k + 1) if 0 <= j < len(toks) and toks[j] == "of"}
    return " ".join(w for k, w in enumerate(toks) if k not in gone)


def paraphrases(base: str, rewording: Rewording, rng: random.Random) -> list[str]:
    """Rewordings of ``base`` at increasing swap rates (duplicates and ``base`` removed)."""
    out: list[str] = []
    for rate in RATES:
        q = retype(rewording.reword(base, rate, rng), rewording.wordnet, rng,
                   rewording.names)
        if q != base and q not in out:
            out.append(q)
    return out
