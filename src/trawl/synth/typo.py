"""Typo style: misspell a query the way thumbs do.

Modelled on Damerau's four classes of single-error misspellings (Damerau 1964, "A
technique for computer detection and correction of spelling errors", CACM 7(3)):
substitution, deletion, insertion and transposition of adjacent letters. Substitutions
hit a QWERTY neighbour of the intended key and insertions double the letter, the two
forms those classes mostly take on a phone keyboard.
Each word of at least MIN_LENGTH letters gets exactly one error with probability
``rate``; an error always changes the word.
"""

from __future__ import annotations

import random

ROWS = ("qwertyuiop", "asdfghjkl", "zxcvbnm")
MIN_LENGTH = 4  # short words are rarely mistyped and a typo in them changes meaning
KINDS = ("substitution", "deletion", "insertion", "transposition")
DEFAULT_RATE = 0.15  # common practice, no source: a few mistyped words per ten queries


def _neighbours() -> dict[str, str]:
    out: dict[str, str] = {}
    for r, row in enumerate(ROWS):
        for c, ch in enumerate(row):
            near = [row[c - 1] if c > 0 else "", row[c + 1] if c + 1 < len(row) else ""]
            for rr in (r - 1, r + 1):
                if 0 <= rr < len(ROWS):
                    near += [ROWS[rr][cc] for cc in (c - 1, c, c + 1)
                             if 0 <= cc < len(ROWS[rr])]
            out[ch] = "".join(sorted(set(x for x in near if x)))
    return out


NEIGHBOURS = _neighbours()


def misspell(word: str, rng: random.Random) -> tuple[str, str]:
    """One Damerau error in ``word``; returns (new word, kind). Needs >= 2 letters."""
    letters = [k for k, ch in enumerate(word) if ch in NEIGHBOURS]
    kind = rng.choice(KINDS)
    if kind == "transposition":
        pairs = [k for k in range(len(word) - 1) if word[k] != word[k + 1]]
        if pairs:
            k = rng.choice(pairs)
            return word[:k] + word[k + 1] + word[k] + word[k + 2:], kind
        kind = "deletion"
    if kind == "substitution" and letters:
        k = rng.choice(letters)
        return word[:k] + rng.choice(NEIGHBOURS[word[k]]) + word[k + 1:], kind
    if kind == "insertion":
        k = rng.randrange(len(word))
        return word[:k + 1] + word[k] + word[k + 1:], kind
    k = rng.randrange(1, len(word)) if len(word) > 2 else rng.randrange(len(word))
    return word[:k] + word[k + 1:], "deletion"


def add_typos(query: str, rng: random.Random, rate: float = DEFAULT_RATE) -> str:
    """Give each long-enough word one error with probability ``rate``."""
    out = []
    for w in query.split():
        if len(w) >= MIN_LENGTH and w.isalpha() and rng.random() < rate:
            w = misspell(w, rng)[0]
        out.append(w)
    return " ".join(out)
