"""The query styles as the orchestrator sees them: ``(item, tools, rng) -> candidates``.

Each style offers a few candidate wordings for one item; ``compose`` keeps the one whose
overlap with the item is closest to a target drawn from the overlap profile.
"""

from __future__ import annotations

import random
from collections.abc import Callable, Mapping
from dataclasses import dataclass

from ..catalogue import Item
from .corpus import Corpus
from .keyword import keyword_query, title_phrase
from .llm import LlmClient
from .paraphrase import Rewording, drop_rarest, paraphrases
from .question import question_query
from .typo import DEFAULT_RATE, add_typos, misspell

CANDIDATES = 3  # draws per slot for the styles that do not vary their wording themselves
NEEDS_WORDNET = ("paraphrase",)


@dataclass(frozen=True)
class Tools:
    """What the styles draw on, loaded once per run."""

    corpus: Corpus
    rewording: Rewording
    typo_rate: float = DEFAULT_RATE
    llm: LlmClient | None = None


def can_reword(tools: Tools) -> bool:
    return tools.rewording.wordnet is not None or bool(tools.rewording.lexicon.entries)


def _keyword(item: Item, tools: Tools, rng: random.Random) -> list[str]:
    return [keyword_query(item, tools.corpus, rng) for _ in range(CANDIDATES)]


def _question(item: Item, tools: Tools, rng: random.Random) -> list[str]:
    return [question_query(item, tools.corpus, rng) for _ in range(CANDIDATES)]


def _base(item: Item, tools: Tools, rng: random.Random) -> str:
    """What paraphrase and typo start from: the title's words (see ``title_phrase``)."""
    return " ".join(title_phrase(item, tools.corpus, rng))


def _reworded(base: str, item: Item, tools: Tools, rng: random.Random) -> list[str]:
    stems = tools.corpus.words[item.id].stems
    out = paraphrases(base, tools.rewording, rng) or [base]
    return [drop_rarest(q, stems, tools.corpus.idf) for q in out]


def _paraphrase(item: Item, tools: Tools, rng: random.Random) -> list[str]:
    return _reworded(_base(item, tools, rng), item, tools, rng)


def _typo(item: Item, tools: Tools, rng: random.Random) -> list[str]:
    """A title query (paraphrased when WordNet or a lexicon is there) with at least one
    misspelt word, the rest at the typo rate."""
    cands = _paraphrase(item, tools, rng) if can_reword(tools) else [_base(item, tools, rng)]
    out = []
    for q in cands:
        toks = q.split()
        long = [k for k, w in enumerate(toks) if len(w) >= 4 and w.isalpha()]
        if not long:
            continue
        k = rng.choice(long)
        toks[k] = misspell(toks[k], rng)[0]
        rest = add_typos(" ".join(toks[:k] + toks[k + 1:]), rng, tools.typo_rate).split()
        out.append(" ".join(rest[:k] + [toks[k]] + rest[k:]))
    return out


def _llm(item: Item, tools: Tools, rng: random.Random) -> list[str]:
    assert tools.llm is not None
    return tools.llm.queries_for(item, rng)


STYLE_MAKERS: Mapping[str, Callable[[Item, Tools, random.Random], list[str]]] = {
    "keyword": _keyword, "question": _question, "paraphrase": _paraphrase,
    "typo": _typo, "llm": _llm,
}
GENERATORS = {"keyword": "tfidf-terms", "question": "type-templates",
              "paraphrase": "wordnet+lexicon", "typo": "damerau-keyboard", "llm": "chat"}
