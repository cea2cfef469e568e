"""Words as query synthesis sees them: tokens, stop words, content words, light stems.

Overlap figures and keyword salience both need the same notion of "the same word", so
it lives here once. Stems are deliberately light (plural endings only) so that a
synonym swap that changes the stem really changes the word.
"""

from __future__ import annotations

import re

TOKEN = re.compile(r"[^\W_]+(?:['’\-][^\W_]+)*", re.UNICODE)

# Function words and query filler; common practice, no source (a hand list in the spirit
# of the usual English stop lists).
STOPWORDS = frozenset("""
a about above after again against all also am an and any are as at be because been before
being below between both but by can cannot could did do does doing done down during each
either else etc ever every few for from further get gets getting got had has have having he
her here hers herself him himself his how however i if in into is it its itself just least
less let like made make many may me might more most much must my myself neither no nor not
now of off often on once one only or other others our ours ourselves out over own per
perhaps quite rather really same see seen shall she should since so some such than that the
their theirs them themselves then there these they this those though through thus to too
under until up upon us use used uses using very via was we well were what when where
whether which while who whom whose why will with within without would yet you your yours
yourself yourselves
""".split())


def words(text: str) -> list[str]:
    """Lower-cased word tokens (letters and digits; inner hyphens/apostrophes kept)."""
    return [w.lower() for w in TOKEN.findall(text)]


CLITICS = frozenset("t re ve ll d m".split())  # "haven't", "you're", "we've", "it'll", "i'm"
PRONOUN_S = frozenset("it that there what here he she who where how".split())  # "it's"


def is_content(word: str) -> bool:
    """A word that carries topic: not a stop word, contraction, lone digit or letter."""
    return (len(word) > 1 and word not in STOPWORDS and not word.isdigit()
            and not is_contraction(word))


def is_contraction(word: str) -> bool:
    """"haven't", "you're", "it's" (a function word however it is spelt); a possessive
    such as "child's" is not one."""
    head, sep, tail = word.replace("’", "'").partition("'")
    return bool(sep) and (tail in CLITICS or tail == "s" and head in PRONOUN_S)


def content_words(text: str) -> list[str]:
    return [w for w in words(text) if is_content(w)]


def stem(word: str) -> str:
    """Harman's S-stemmer (Harman 1991, "How effective is suffixing?", JASIS 42(1)):
    three rules that fold English plurals and nothing else."""
    if len(word) > 3 and word.endswith("ies") and not word.endswith(("eies", "aies")):
        return word[:-3] + "y"
    if len(word) > 3 and word.endswith("es") and not word.endswith(("aes", "ees", "oes")):
        return word[:-1]
    if len(word) > 2 and word.endswith("s") and not word.endswith(("us", "ss")):
        return word[:-1]
    return word


def stems(text: str) -> set[str]:
    return {stem(w) for w in content_words(text)}
