"""Each query style and the silver set on a tiny invented catalogue (a community library app)."""

from __future__ import annotations

import json
import random

import pytest

from trawl.catalogue import Catalogue, Item
from trawl.errors import InputError, UsageError
from trawl.silver import write_silver
from trawl.synth import SynthSettings, read_lexicon, synthesise
from trawl.synth.corpus import build_corpus
from trawl.synth.grading import Draft, merge_near_duplicates
from trawl.synth.keyword import keyword_query, salient_terms, title_phrase
from trawl.synth.lexicon import Lexicon
from trawl.synth.overlap import OverlapProfile
from trawl.synth.paraphrase import Rewording, paraphrases
from trawl.synth.text import content_words
from trawl.synth.question import FORM, INFORMATIONAL, SCREEN, destination_kind, question_query
from trawl.synth.compose import FREE_WORDS, sample_items
from trawl.synth.settings import parse_mix

ITEMS = (
    Item("art-1", "article", "Renewing borrowed books",
         "Renew loans online before the due date. Each renewal adds three weeks to the loan.",
         related=("scr-1",)),
    Item("art-2", "article", "Overdue fines",
         "Fines build up daily for overdue items. Pay fines at the desk or online."),
    Item("scr-1", "screen", "My loans", "Lists your current loans, due dates and renewals."),
    Item("frm-1", "form", "Suggest a purchase",
         "Ask the library to buy a book or film that is missing from the catalogue."),
    Item("faq-1", "faq", "Can I reserve a study room?",
         "Study rooms can be reserved for two hours a day with your membership card."),
)
CAT = Catalogue("tiny.jsonl", ITEMS)
LEXICON_TEXT = "# library wording = member wording\nrenew = extend, keep longer\nloans = borrowed books\n"
NO_PROFILE = OverlapProfile((1.0,), 1.0, "test: keep everything")


@pytest.fixture(scope="module")
def corpus():
    return build_corpus(CAT)


def test_salience_prefers_distinctive_title_words(corpus):
    ranked = [w for w, _ in corpus.salience("art-2")]
    # title words "overdue" and "fines" get the title boost and are rare in the catalogue
    assert ranked[:2] == ["fines", "overdue"]


def test_keyword_query_is_1_to_4_item_words_not_the_whole_title(corpus):
    item_words = set(corpus.words["art-1"].title + corpus.words["art-1"].body)
    title = list(corpus.words["art-1"].title)
    for seed in range(50):
        q = keyword_query(ITEMS[0], corpus, random.Random(seed)).split()
        assert 1 <= len(q) <= 4
        assert set(q) <= item_words
        assert q != title


def test_salient_terms_keep_item_order(corpus):
    terms = salient_terms(ITEMS[3], corpus, random.Random(1), n=3)
    order = list(corpus.words["frm-1"].title + corpus.words["frm-1"].body)
    assert terms == sorted(terms, key=order.index)


@pytest.mark.parametrize("type_name, kind, templates", [
    ("article", "info", INFORMATIONAL), ("screen", "screen", SCREEN),
    ("Settings page", "screen", SCREEN), ("form", "form", FORM), ("claim_form", "form", FORM),
])
def test_question_templates_follow_destination_type(corpus, type_name, kind, templates):
    assert destination_kind(type_name) == kind
    item = Item("x", type_name, "Renewing borrowed books", ITEMS[0].text)
    cat = Catalogue("t", (item,) + ITEMS[1:])
    q = question_query(item, build_corpus(cat), random.Random(4))
    heads = {t.split("{t}")[0] for t in templates}
    assert any(q.startswith(h) for h in heads if h) or any(q.endswith(t.split("{t}")[1])
                                                          for t in templates if t.split("{t}")[1])


def test_paraphrase_with_lexicon_swaps_catalogue_wording(tmp_path):
    path = tmp_path / "lex.txt"
    path.write_text(LEXICON_TEXT)
    rw = Rewording(None, read_lexicon(path))
    out = paraphrases("renew loans", rw, random.Random(0))
    # rate 1.0 is among the rates tried, so a fully swapped wording is always offered
    assert any("renew" not in q and "loans" not in q for q in out)
    assert all(set(q.split()) <= {"renew", "loans", "extend", "keep", "longer", "borrowed",
                                  "books"} for q in out)


def test_lexicon_errors_name_file_and_line(tmp_path):
    bad = tmp_path / "bad.txt"
    bad.write_text("renew = extend\nthis line has no separator\n")
    with pytest.raises(InputError, match=r"bad.txt:2: expected 'catalogue wording"):
        read_lexicon(bad)
    empty_right = tmp_path / "r.txt"
    empty_right.write_text("renew =  ,\n")
    with pytest.raises(InputError, match=r"r.txt:1: everyday wording: nothing right"):
        read_lexicon(empty_right)
    with pytest.raises(InputError, match="lexicon file not found"):
        read_lexicon(tmp_path / "missing.txt")
    folder = tmp_path / "dir.txt"
    folder.mkdir()
    with pytest.raises(InputError, match="is a folder"):
        read_lexicon(folder)


def test_synthesise_is_deterministic_and_seed_sensitive(tmp_path):
    kw = dict(per_item=3, styles="keyword,question,typo", profile=NO_PROFILE)
    a = synthesise(CAT, SynthSettings(seed=1, **kw), quiet=True)
    b = synthesise(CAT, SynthSettings(seed=1, **kw), quiet=True)
    c = synthesise(CAT, SynthSettings(seed=2, **kw), quiet=True)
    assert a.as_dict() == b.as_dict()
    assert a.queries != c.queries
    pa, pb = write_silver(tmp_path / "a", a), write_silver(tmp_path / "b", b)
    for x, y in zip(pa, pb):
        assert x.read_bytes() == y.read_bytes()
    assert [p.name for p in pa] == ["a.queries.tsv", "a.qrels", "a.jsonl"]


def test_silver_grades_source_2_related_1_and_provenance():
    s = synthesise(CAT, SynthSettings(styles="keyword", profile=NO_PROFILE, neighbours=()),
                   quiet=True)  # consensus neighbours are tested on their own
    for rec in s.provenance:
        grades = s.qrels[rec["qid"]]
        assert grades[rec["source"]] == 2
        assert {i for i, g in grades.items() if g == 1} == set(CAT.by_id[rec["source"]].related)
        assert rec["style"] == "keyword" and rec["generator"] == "tfidf-terms"
        assert rec["seed"] == 0 and 0 <= rec["overlap"] <= 1
    no_related = synthesise(CAT, SynthSettings(styles="keyword", profile=NO_PROFILE,
                                               related_grade=0), quiet=True)
    assert all(set(g.values()) == {2} for g in no_related.qrels.values())


def test_near_duplicates_are_merged_and_every_source_judged():
    drafts = [Draft("renew my loans", "art-1", "keyword", "g", 1.0),
              Draft("loans renew", "scr-1", "keyword", "g", 1.0),
              Draft("overdue fines", "art-2", "keyword", "g", 1.0)]
    merged = merge_near_duplicates(drafts)
    assert [m.text for m in merged] == ["renew my loans", "overdue fines"]
    assert merged[0].sources == ("art-1", "scr-1")


def test_same_query_from_two_items_is_one_query_judging_both():
    twin = Catalogue("twins", (Item("a", "article", "Lost library card", "Report a lost card."),
                               Item("b", "faq", "Lost library card", "Report a lost card.")))
    s = synthesise(twin, SynthSettings(per_item=4, styles="keyword", profile=NO_PROFILE,
                                       seed=3, neighbours=()),
                   quiet=True)  # here every item would be the other's neighbour
    # two items with the same words and four draws each must produce a shared query
    assert len(set(s.queries.values())) == len(s.queries)
    both = [q for q, g in s.qrels.items() if set(g) == {"a", "b"}]
    assert both and all(set(s.qrels[q].values()) == {2} for q in both)
    # every slot is a query, a merged draft, or dropped (an item's later slot takes only
    # a wording new for that item)
    assert s.summary["merged_drafts"] == 8 - s.summary["dropped"] - len(s.queries)


def test_overlap_ceiling_drops_long_copies_and_counts_them():
    strict = OverlapProfile((0.0,), 0.5, "test")
    s = synthesise(CAT, SynthSettings(per_item=4, styles="keyword", profile=strict,
                                      neighbours=()), quiet=True)
    # keyword queries copy item words (overlap 1.0): only the short ones stay
    assert s.queries
    assert all(len(content_words(q)) <= FREE_WORDS for q in s.queries.values())
    dropped = [r["dropped"] for r in s.summary["rows"] if r["dropped"]]
    assert dropped and all(set(d) == {"overlap above ceiling"} for d in dropped)
    slots = s.summary["queries"] + s.summary["merged_drafts"] + s.summary["dropped"]
    assert slots == 4 * len(ITEMS)


def test_stratified_sample_keeps_type_proportions():
    items = tuple(Item(f"a{k}", "article", f"topic {k} words") for k in range(60)) + \
        tuple(Item(f"s{k}", "screen", f"screen {k} words") for k in range(30)) + \
        tuple(Item(f"f{k}", "form", f"form {k} words") for k in range(10))
    cat = Catalogue("strata", items)
    chosen = sample_items(cat, 20, seed=0)
    types = [it.type for it in chosen]
    assert (types.count("article"), types.count("screen"), types.count("form")) == (12, 6, 2)
    assert chosen == [it for it in items if it in chosen]  # catalogue order kept
    assert sample_items(cat, 20, seed=0) == chosen and sample_items(cat, 20, seed=1) != chosen


@pytest.mark.parametrize("styles, message", [
    ("keyword,shouting", "unknown query style 'shouting'"),
    ("keyword:x", "style weight 'x'"),
    ("keyword:0", "no query style with a positive weight"),
])
def test_bad_style_mix(styles, message):
    with pytest.raises(UsageError, match=message):
        parse_mix(styles)


def test_items_without_words_are_an_error():
    empty = Catalogue("blank.jsonl", (Item("a", "article", "The"), Item("b", "faq", "A it")))
    with pytest.raises(UsageError, match="no item has any words"):
        synthesise(empty, quiet=True)
    with pytest.raises(UsageError, match="catalogue has no items"):
        synthesise(Catalogue("none.jsonl", ()), quiet=True)


def test_styles_needing_wordnet_are_skipped_and_named():
    s = synthesise(CAT, SynthSettings(styles="keyword,paraphrase", profile=NO_PROFILE),
                   wordnet=None, quiet=True)
    assert set(s.skipped_styles) == {"paraphrase"}
    assert {p["style"] for p in s.provenance} == {"keyword"}
    with pytest.raises(UsageError, match="every requested style was skipped"):
        synthesise(CAT, SynthSettings(styles="paraphrase"), wordnet=None, quiet=True)
    # with a lexicon, paraphrase runs without WordNet
    lex = Lexicon({("loans",): ("borrowed books",)})
    s2 = synthesise(CAT, SynthSettings(styles="paraphrase", profile=NO_PROFILE), wordnet=None,
                    lexicon=lex, quiet=True)
    assert not s2.skipped_styles


def test_summary_rows_match_provenance():
    s = synthesise(CAT, SynthSettings(per_item=4, styles="keyword,question", profile=NO_PROFILE,
                                      seed=5), quiet=True)
    rows = {(r["style"], r["type"]): r for r in s.summary["rows"]}
    for (style, typ), r in rows.items():
        recs = [p for p in s.provenance if (p["style"], p["type"]) == (style, typ)]
        assert r["queries"] == len(recs)
        if recs:
            assert r["mean_overlap"] == pytest.approx(
                sum(p["overlap"] for p in recs) / len(recs), abs=1e-3)
    assert json.loads(json.dumps(s.as_dict())) == s.as_dict()


def test_title_phrase_is_the_title_or_a_run_around_the_most_salient_word():
    from trawl.synth.keyword import MAX_PHRASE

    whole = Item("art-8", "article",
                 "Borrowing rules for reference books, maps and rare local history journals",
                 "Reference books stay in the building.")
    long = Item("art-9", "article",
                "Borrowing rules, renewal periods and overdue charges for reference books, "
                "atlases, maps, rare local history journals and recorded music",
                "Reference books stay in the building.")
    cat = Catalogue("t", ITEMS + (whole, long))
    corpus = build_corpus(cat)
    assert title_phrase(whole, corpus, random.Random(0)) == list(corpus.words["art-8"].title)
    title = list(corpus.words["art-9"].title)
    assert len(title) > MAX_PHRASE
    top = next(w for w, _ in corpus.salience("art-9") if w in title)
    sizes = set()
    for seed in range(40):
        run = title_phrase(long, corpus, random.Random(seed))
        assert 3 <= len(run) <= MAX_PHRASE and top in run
        k = title.index(run[0])
        assert title[k:k + len(run)] == run  # contiguous, in title order
        sizes.add(len(run))
    assert len(sizes) > 3  # run lengths vary
    short = title_phrase(ITEMS[1], build_corpus(CAT), random.Random(0))
    assert short == ["overdue", "fines"]


def test_recurring_word_pairs_become_phrases():
    items = tuple(Item(f"i{k}", "faq", f"Smart card question {k}", "Your smart card works.")
                  for k in range(3)) + (Item("x", "faq", "Card smart", "Other words."),)
    corpus = build_corpus(Catalogue("p", items))
    assert ("smart", "card") in corpus.phrases  # in 3 items
    assert ("card", "smart") not in corpus.phrases  # in 1 item
    assert ("card", "works") in corpus.phrases  # adjacent in the three bodies
    assert ("question", "0") not in corpus.phrases  # digits are not content words


def test_names_are_words_the_catalogue_capitalises_inside_sentences():
    from trawl.synth.corpus import find_names

    items = (
        Item("a", "faq", "Night Bus Network", "The night network runs from Tarrowby. "
             "Buses leave Tarrowby hourly from 1 March."),
        Item("b", "faq", "Fares from March", "Fares rise in March. Network maps show "
             "every stop. Press Continue to pay."),
        Item("c", "faq", "Maps", "Print the network map at the Tarrowby desk."),
    )
    found = find_names(Catalogue("p", items))
    # capitalised in every mid-sentence use: names
    assert {"tarrowby", "march"} <= found
    # "Network" opens a sentence and fills a Title Case title; "Continue" is capitalised
    # once only (a button label), so neither is a name
    assert not {"network", "continue", "night", "bus", "fares"} & found


def test_default_mix_falls_back_without_wordnet():
    s = synthesise(CAT, SynthSettings(profile=NO_PROFILE), wordnet=None, quiet=True)
    assert set(s.skipped_styles) == {"paraphrase"}
    assert {p["style"] for p in s.provenance} <= {"question", "keyword"}
