"""How silver queries are worded: title words, joining "of", adverbs, contractions and the
rarest-word rule, on small fixed items (invented library-app titles)."""

from __future__ import annotations

import random

import pytest

from trawl.catalogue import Catalogue, Item
from trawl.synth import load_wordnet
from trawl.synth.corpus import build_corpus
from trawl.synth.keyword import title_phrase
from trawl.synth.paraphrase import drop_rarest
from trawl.synth.styles import STYLE_MAKERS, Tools
from trawl.synth.paraphrase import Rewording
from trawl.synth.text import content_words, is_content

WN = load_wordnet()
wordnet_needed = pytest.mark.skipif(WN is None, reason="WordNet (wordnet-base) not installed")
ITEMS = (
    Item("frm-1", "form", "Register a power of attorney",
         "Tell us who can act for you. Upload the registered document."),
    Item("faq-1", "faq", "Why was my card suddenly declined?",
         "Cards are declined when they have expired or have been reported lost."),
    Item("art-1", "article", "Renewing borrowed books",
         "Renew loans online before the due date."),
    Item("art-2", "article", "Proof of address we accept",
         "A utility bill or a bank statement from the last three months."),
)
CAT = Catalogue("wording.jsonl", ITEMS)


@pytest.fixture(scope="module")
def corpus():
    return build_corpus(CAT, WN)


@pytest.mark.parametrize("word, content", [
    ("haven't", False), ("you're", False), ("it's", False), ("we've", False),
    ("child's", True), ("card", True),
])
def test_contractions_are_function_words(word, content):
    assert is_content(word) is content


@wordnet_needed
def test_title_keeps_a_joining_of_and_leaves_out_adverbs(corpus):
    rng = random.Random(0)
    assert title_phrase(ITEMS[0], corpus, rng) == ["register", "power", "of", "attorney"]
    # "suddenly" is usually an adverb in WordNet's tagged corpus
    assert title_phrase(ITEMS[1], corpus, rng) == ["card", "declined"]


def test_a_dropped_word_takes_its_joining_of_with_it():
    idf = {"proof": 3.0, "address": 1.0, "accept": 0.5}.get
    q = drop_rarest("proof of address accept", {"proof", "address", "accept"},
                    lambda w: idf(w, 0.0))
    assert q == "address accept"
    # the head (last word) stays, so "of" before it stays with the word before it
    q = drop_rarest("register power of attorney", {"register", "power", "attorney"},
                    {"register": 0.1, "power": 2.0, "attorney": 3.0}.get)
    assert q == "register attorney"


@wordnet_needed
def test_paraphrase_queries_are_deterministic_for_a_seed(corpus):
    tools = Tools(corpus, Rewording(WN, phrases=corpus.phrases, known=corpus.known,
                                    names=corpus.names))
    for it in ITEMS:
        a = STYLE_MAKERS["paraphrase"](it, tools, random.Random(f"7:{it.id}"))
        b = STYLE_MAKERS["paraphrase"](it, tools, random.Random(f"7:{it.id}"))
        assert a == b and a
        for q in a:
            assert content_words(q), q
