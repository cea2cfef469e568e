"""Ids and labels that look identical but differ are warned about, shown escaped.

The two forms of "café" come from Python's unicodedata.normalize (NFC and NFD, Unicode
Standard Annex #15); U+200B is ZERO WIDTH SPACE (category Cf). Before, `check` said
nothing about them, a judged item in the other form was only "not in the catalogue",
a run query id with a zero-width space scored 0 under a warning that printed it exactly
like the qrels id, and a query of zero-width spaces was accepted as text.
"""

from __future__ import annotations

import unicodedata

import pytest

from trawl.catalogue import Catalogue, Item, check_catalogue
from trawl.destinations import query_types
from trawl.errors import InputError
from trawl.lookalike import difference, groups, key, visible
from trawl.queries import read_queries
from trawl.runs import make_run
from trawl.scores import score_runs

NFC = unicodedata.normalize("NFC", "caf\u00e9")
NFD = unicodedata.normalize("NFD", "caf\u00e9")
ZWSP = "\u200b"


def catalogue() -> Catalogue:
    items = [Item(NFC, "faq", "Cafe opening hours at the main branch"),
             Item(NFD, "faq", "Cafe menu and prices for members"),
             Item("lost-card", "FAQ", "Replace a lost library card online"),
             Item(f"lost{ZWSP}-card", "form", "Report a lost card with this form"),
             Item("room", "screen", "Book a study room for a group", related=("lost-cards",))]
    for n, it in enumerate(items, start=1):
        object.__setattr__(it, "line", n)
    return Catalogue("lib.jsonl", tuple(items))


def test_the_two_forms_really_differ_and_look_alike():
    assert NFC != NFD and len(NFC) == 4 and len(NFD) == 5
    assert key(NFC) == key(NFD) and key("FAQ") == key("faq") == key(f"f{ZWSP}aq")
    assert visible(NFD) == "'cafe\\u0301'" and visible(NFC) == f"'{NFC}'"
    assert visible(f"lost{ZWSP}-card") == "'lost\\u200b-card'"
    assert difference(NFC, NFD) == "Unicode normalisation, NFC vs NFD"
    assert difference("lost-card", f"lost{ZWSP}-card") == "invisible characters"
    assert difference("FAQ", "faq") == "case only"
    assert groups(["a", "b", "A", "a"]) == [("a", "A")]


def test_check_warns_about_lookalike_ids_and_types_escaped():
    warnings = check_catalogue(catalogue(), unit="words").warnings
    assert (f"lib.jsonl:2: item ids that look alike but differ: '{NFC}' and 'cafe\\u0301' "
            "(differ in Unicode normalisation, NFC vs NFD)") in warnings
    assert ("lib.jsonl:4: item ids that look alike but differ: 'lost-card' and "
            "'lost\\u200b-card' (differ in invisible characters)") in warnings
    assert ("lib.jsonl: destination types that look alike but differ, counted apart: "
            "'FAQ' and 'faq' (differ in case only)") in warnings
    assert all(ZWSP not in w and "\u0301" not in w for w in warnings)


def test_judged_item_in_the_other_form_is_named_as_a_lookalike():
    qrels = {"q1": {NFD + "x": 1, "lost-card": 2}, "q2": {f"ro{ZWSP}om": 2}}
    _, warnings = query_types(qrels, catalogue())
    assert warnings[0] == ("judged items not in the catalogue lib.jsonl: 2: "
                           f"{visible(NFD + 'x')}, 'ro\\u200bom'")
    assert warnings[1] == ("judged items that look like catalogue items but differ, so they "
                           "are not matched: 1: 'ro\\u200bom' looks like 'room' (differ in "
                           "invisible characters)")


def test_run_query_id_with_a_zero_width_space_is_named_not_just_scored_zero():
    qrels = {"q1": {"room": 1}, "q2": {"room": 1}}
    run = make_run("r", {f"q1{ZWSP}": [("room", 1.0)], "q2": [("room", 1.0)]})
    rep = score_runs(qrels, run, ["hit@1"], catalogue())
    assert rep.values[0, :, 0].tolist() == [0.0, 1.0]
    assert ("run 'r': queries not in the qrels, ignored: 1: 'q1\\u200b'") in rep.warnings
    assert ("run 'r': query ids that look like qrels query ids but differ, so they are not "
            "matched: 1: 'q1\\u200b' looks like 'q1' (differ in invisible characters)"
            ) in rep.warnings


def test_run_item_in_the_other_form_is_named():
    run = make_run("r", {"q1": [(NFC, 2.0), ("Room", 1.0)]})
    rep = score_runs({"q1": {"room": 1}}, run, ["hit@1"], catalogue())
    assert ("run 'r': items that look like catalogue items but differ, so they are not "
            "matched: 1: 'Room' looks like 'room' (differ in case only)") in rep.warnings


@pytest.mark.parametrize("text", [ZWSP * 3, f"{ZWSP}\u2060\ufeff", "\u3164", "\u200e\u200f"])
def test_query_of_only_invisible_characters_is_refused_like_an_empty_one(tmp_path, text):
    path = tmp_path / "q.tsv"
    path.write_text(f"q1\tlate fees\nq2\t{text}\n", encoding="utf-8")
    with pytest.raises(InputError) as exc:
        read_queries(path)
    assert str(exc.value) == (f"{path}:2: text: query 'q2' has no visible text, only "
                              f"{visible(text)}; give it words or remove the line")
    assert "\\u" in str(exc.value)


def test_scores_per_type_say_when_types_look_alike():
    # the per-type rows of 'FAQ' and 'faq' are counted apart; the reader is told why
    qrels = {"q1": {"lost-card": 2}, "q2": {NFC: 2}}
    rep = score_runs(qrels, make_run("r", {"q1": [("lost-card", 1.0)]}), ["hit@1"],
                     catalogue())
    assert ("destination types that look alike but differ, counted apart: 'FAQ' and 'faq' "
            "(differ in case only)") in rep.warnings
    assert list(rep.groups()) == [None, "FAQ", "faq"]
