"""Synthesis settings, the coverage rule and the word check on a tiny invented catalogue
(a community library app). Invented data: these tests check behaviour, not agreement."""

from __future__ import annotations

import pytest

from trawl.catalogue import Catalogue, Item
from trawl.errors import UsageError
from trawl.synth import SynthSettings, load_wordnet, synthesise
from trawl.synth import compose
from trawl.synth.compose import coverage, sample_items
from trawl.synth.grading import Draft, Merged, near_duplicate, query_key
from trawl.synth.lexicon import Lexicon
from trawl.synth.text import words

ITEMS = (
    Item("art-1", "article", "Renewing borrowed books",
         "Renew loans online before the due date. Each renewal adds three weeks to the loan."),
    Item("art-2", "article", "Overdue fines",
         "Fines build up daily for overdue items. Pay fines at the desk or online."),
    Item("art-3", "article", "Using the study rooms",
         "Study rooms hold up to six people. Bring your membership card to unlock the door."),
    Item("scr-1", "screen", "My loans", "Lists your current loans, due dates and renewals."),
    Item("scr-2", "screen", "Opening hours", "Today's opening hours for every branch."),
    Item("frm-1", "form", "Suggest a purchase",
         "Ask the library to buy a book or film that is missing from the catalogue."),
    Item("frm-2", "form", "Report a damaged book",
         "Tell us about a torn, wet or marked book so it can be repaired or replaced."),
    Item("faq-1", "faq", "Can I reserve a study room?",
         "Study rooms can be reserved for two hours a day with your membership card."),
    Item("faq-2", "faq", "How do I change my PIN?",
         "Choose a new four-digit PIN under account settings, or ask at the desk."),
)
CAT = Catalogue("tiny.jsonl", ITEMS)
wordnet_needed = pytest.mark.skipif(load_wordnet() is None,
                                    reason="WordNet (Debian's wordnet-base) not installed")


@pytest.mark.parametrize("kw, message", [
    ({"per_item": 0}, "per_item=0 must be >= 1"),
    ({"sample": 0}, "sample=0 must be >= 1"),
    ({"max_overlap": 0.0}, "max overlap 0.0 must be in"),
    ({"typo_rate": 1.5}, "typo rate 1.5 must be between 0 and 1"),
    ({"related_grade": 2}, r"0 <= related \(2\) < source \(2\)"),
    ({"neighbour_depth": 0}, "neighbour depth 0 must be >= 1"),
    ({"check_with": ("bm25",), "check_depth": 0}, "check depth 0 must be >= 1"),
])
def test_settings_refuse_values_no_run_can_use(kw, message):
    with pytest.raises(UsageError, match=message):
        SynthSettings(**kw).check()
    with pytest.raises(UsageError, match=message):
        synthesise(CAT, SynthSettings(**kw), quiet=True)


def test_library_messages_name_no_command_line_flags():
    for kw in ({"styles": "llm"}, {"styles": "paraphrase:0"}):
        with pytest.raises(UsageError) as err:
            synthesise(CAT, SynthSettings(**kw), quiet=True)
        assert "--" not in str(err.value)


def test_coverage_is_the_share_of_each_types_items_a_query_came_from():
    def merged(*sources):
        return Merged("q", tuple(Draft("q", s, "paraphrase", "g", 0.5) for s in sources))

    final = {"q1": merged("art-1", "art-2"), "q2": merged("scr-1"), "q3": merged("art-1")}
    got = coverage(ITEMS, final)
    assert got == {"article": round(2 / 3, 4), "faq": 0.0, "form": 0.0, "screen": 0.5}


def test_large_catalogues_are_sampled_by_type_by_default(monkeypatch):
    monkeypatch.setattr(compose, "LARGE_CATALOGUE", 6)
    chosen = sample_items(CAT, None, seed=0)
    assert len(chosen) == 6
    # largest remainder over 3 articles, 2 screens, 2 forms, 2 faqs: 2 + 4 x 1, by type
    kinds = [it.type for it in chosen]
    assert sorted(kinds.count(t) for t in set(kinds)) == [1, 1, 2, 2] or \
        sorted(kinds.count(t) for t in set(kinds)) == [1, 1, 1, 3]
    assert set(kinds) == {"article", "screen", "form", "faq"}
    assert sample_items(CAT, 4, seed=0) == sample_items(CAT, 4, seed=0)
    monkeypatch.setattr(compose, "LARGE_CATALOGUE", 100)
    assert sample_items(CAT, None, seed=0) == list(ITEMS)


@wordnet_needed
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_defaults_cover_at_least_70_percent_of_every_type(seed):
    # the coverage goal of issue 14; before short queries were exempt from the overlap
    # ceiling, these titles gave no query at all
    s = synthesise(CAT, SynthSettings(seed=seed, neighbours=()), quiet=True)
    cover = s.summary["coverage"]
    assert set(cover) == {"article", "screen", "form", "faq"}
    assert min(cover.values()) >= 0.7, cover


@wordnet_needed
def test_later_slots_add_only_new_wordings_that_copy_no_more():
    lex = Lexicon({("fines",): ("late fees",), ("overdue",): ("late",),
                   ("purchase",): ("buy",), ("loans",): ("borrowed books",)})
    s = synthesise(CAT, SynthSettings(per_item=4, seed=3, neighbours=()), lexicon=lex,
                   quiet=True)
    by_item: dict[str, list[dict]] = {}
    for rec in s.provenance:
        by_item.setdefault(rec["source"], []).append(rec)
    assert any(len(recs) > 1 for recs in by_item.values())
    for recs in by_item.values():
        keys = [query_key(r["text"]) for r in recs]
        assert not any(near_duplicate(a, b) for k, a in enumerate(keys) for b in keys[k + 1:])
        overlaps = [r["overlap"] for r in recs]
        assert overlaps == sorted(overlaps, reverse=True)
    dropped = {why for r in s.summary["rows"] for why in r["dropped"]}
    assert "no new wording" in dropped


@wordnet_needed
def test_every_query_word_is_a_real_word():
    # Real = used by the catalogue, listed by wordfreq (PyPI; word frequencies from
    # large public corpora) or in WordNet 3.0 (Princeton): no made-up word forms.
    from wordfreq import zipf_frequency

    wn = load_wordnet()
    own = {w for it in ITEMS for w in words(f"{it.title} {it.text}")}
    for seed in range(5):
        s = synthesise(CAT, SynthSettings(seed=seed, neighbours=()), quiet=True)
        for q in s.queries.values():
            for w in words(q):
                real = (w in own or zipf_frequency(w, "en") > 0
                        or any(wn.base_forms(w, pos) for pos in "nvar"))
                assert real, (w, q)
