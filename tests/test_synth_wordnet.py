"""The WordNet reader: a hand-made database in wndb(5) format, and the real WordNet 3.0."""

from __future__ import annotations

import random
from pathlib import Path

import pytest

from trawl.synth.wordnet import find_wordnet, load_wordnet


def _fake_wordnet(folder: Path) -> Path:
    """Two noun synsets: {coach, bus} whose hypernym is {vehicle}; offsets are byte positions."""
    header = "  1 This is a licence header line, as in the real files.\n"
    vehicle = "{off:08d} 06 n 01 vehicle 0 000 | a conveyance\n"
    bus = "{off:08d} 06 n 02 bus 0 coach 0 001 @ {hyp:08d} n 0000 | a large vehicle\n"
    off_vehicle = len(header)
    line_vehicle = vehicle.format(off=off_vehicle)
    off_bus = off_vehicle + len(line_vehicle)
    (folder / "data.noun").write_text(header + line_vehicle +
                                      bus.format(off=off_bus, hyp=off_vehicle))
    (folder / "index.noun").write_text(
        header + f"bus n 1 1 @ 1 0 {off_bus:08d}\ncoach n 1 1 @ 1 0 {off_bus:08d}\n"
        f"vehicle n 1 0 1 0 {off_vehicle:08d}\n")
    (folder / "noun.exc").write_text("busses bus\n")
    return folder


def test_reader_on_a_hand_made_database(tmp_path):
    wn = load_wordnet(_fake_wordnet(tmp_path))
    assert wn is not None
    assert wn.base_forms("buses", "n") == ["bus"]  # morphy rule -ses -> -s
    assert wn.base_forms("busses", "n") == ["bus"]  # exception list
    assert wn.base_forms("coaches", "n") == ["coach"]
    bus = wn.synset("n", wn.senses("coach", "n")[0])
    assert bus.lemmas == ("bus", "coach")
    assert [wn.synset(p, o).lemmas for p, o in bus.hypernyms] == [("vehicle",)]
    assert wn.senses("tram", "n") == () and wn.senses("bus", "v") == ()


def test_missing_wordnet_is_none(tmp_path):
    assert find_wordnet(tmp_path) is None
    assert load_wordnet(tmp_path) is None


REAL = find_wordnet()


@pytest.mark.skipif(REAL is None, reason="WordNet 3.0 not installed (Debian wordnet-base)")
def test_real_wordnet_first_senses():
    wn = load_wordnet()
    # WordNet 3.0 data.noun, synset 02958343 ("car, auto, automobile, machine, motorcar"),
    # the first sense of "car" in index.noun; its hypernym is 03791235 "motor vehicle".
    assert wn.base_forms("cars", "n") == ["car"] and wn.senses("car", "n")[0] == 2958343
    car = wn.synset("n", 2958343)
    assert car.lemmas == ("car", "auto", "automobile", "machine", "motorcar")
    assert [wn.synset(p, o).lemmas for p, o in car.hypernyms] == \
        [("motor vehicle", "automotive vehicle")]
    # noun.exc lists "geese goose"; verb "cancel" first sense: call off, scratch, scrub
    assert wn.base_forms("geese", "n") == ["goose"]
    assert wn.base_forms("cancelled", "v")[0] == "cancel"
    assert wn.synset("v", wn.senses("cancel", "v")[0]).lemmas[:4] == \
        ("cancel", "call off", "scratch", "scrub")


@pytest.mark.skipif(REAL is None, reason="WordNet 3.0 not installed (Debian wordnet-base)")
def test_usual_part_of_speech_and_paraphrase_rules():
    from trawl.synth.paraphrase import Rewording

    wn = load_wordnet()
    # tagsense_cnt in WordNet 3.0's index files: "card" is mostly a noun, "quickly" an
    # adverb, "cancel" a verb
    assert (wn.usual_pos("card"), wn.usual_pos("quickly"), wn.usual_pos("cancel")) == \
        ("n", "r", "v")
    rw = Rewording(wn)
    # WordNet 3.0 cntlist.rev: "car" sense 1 (automobile) has 71 of 73 tagged uses, and
    # "auto" is a common word (wordfreq Zipf >= 4) whose only sense is that one
    assert "auto" in rw.alternatives("car")
    assert rw.alternatives("cancel") == []  # verbs are not swapped
    # "boundary layer" is a WordNet noun lemma, so it is kept whole even at swap rate 1
    out = rw.reword("boundary layer car", 1.0, random.Random(0))
    assert out.startswith("boundary layer ") and not out.endswith("car")
    protected = Rewording(wn, phrases=frozenset({("car", "park")}))
    assert protected.reword("car park", 1.0, random.Random(0)) == "car park"


@pytest.mark.skipif(REAL is None, reason="WordNet 3.0 not installed (Debian wordnet-base)")
def test_swaps_keep_the_dominant_sense():
    from trawl.synth.paraphrase import Rewording

    wn = load_wordnet()
    rw = Rewording(wn)
    # cntlist.rev: "complaint" is tagged 3x as an ailment, 3x in three other senses, so
    # without context it has no dominant sense and "ill" (ailment) is never offered
    assert wn.sense_counts("complaint", "n")[:4] == (3, 1, 1, 1)
    assert rw.alternatives("complaint") == []
    # "plate": no sense holds 70% of its uses, so no "home base" for a flat plate
    assert "home base" not in rw.alternatives("plate")
    # numbers are not reworded ("three" -> "iii")
    assert rw.alternatives("three") == []
    # WordNet-only terms with under two tagged uses are not offered ("passenger vehicle")
    assert "passenger vehicle" not in rw.alternatives("bus")
    # "model": 19 of 45 tagged uses in sense 1, so it is left alone; "car" sense 1 is
    # data.noun offset 02958343 (car, auto, automobile, machine, motorcar)
    assert wn.sense_counts("model", "n")[:3] == (19, 11, 6)
    assert rw.sense("model", "n") is None and rw.alternatives("model") == []
    assert rw.sense("cars", "n") == 2958343


def test_drop_rarest_leaves_out_the_items_rarest_words():
    from trawl.synth.paraphrase import drop_rarest

    idf = {"gyroscopic": 6.0, "propeller": 4.0, "rigid": 3.0, "effect": 1.0, "spin": 5.0}.get
    stems = {"gyroscopic", "propeller", "rigid", "effect"}
    # four item words: the two rarest go; "spin" is not the item's word and stays
    assert drop_rarest("gyroscopic effect rigid propeller spin", stems, idf) == \
        "effect rigid spin"
    assert drop_rarest("gyroscopic rigid effect", stems, idf) == "rigid effect"
    assert drop_rarest("rigid effect spin", stems, idf) == "rigid effect spin"
    # the last word is the phrase's head and stays, however rare
    idf = {"structures": 9.0, "noise": 5.0, "jet": 4.0, "effect": 1.0}.get
    stems = {"structure", "noise", "jet", "effect"}  # S-stems
    assert drop_rarest("effect jet noise structures", stems, idf) == "effect structures"


@pytest.mark.skipif(REAL is None, reason="WordNet 3.0 not installed (Debian wordnet-base)")
def test_retype_uses_base_verbs_and_redraws_the_head_nouns_number():
    from trawl.synth.paraphrase import plural, retype

    wn = load_wordnet()
    # regular plural rules as taught in English grammars (-es after sibilants, -ies)
    assert [plural(w) for w in ("card", "pass", "journey", "city", "box")] == \
        ["cards", "passes", "journeys", "cities", "boxes"]
    rng = random.Random(2)
    outs = [retype("replacing damaged smart cards", wn, rng) for _ in range(400)]
    assert set(outs) <= {"replacing damaged smart cards", "replace damaged smart cards",
                         "replacing damaged smart card", "replace damaged smart card"}
    base = sum(o.startswith("replace ") for o in outs) / len(outs)
    singular = sum(o.endswith(" card") for o in outs) / len(outs)
    # chances 0.7 and 0.5 per query; binomial sd over 400 draws ~0.025
    assert base == pytest.approx(0.7, abs=0.08) and singular == pytest.approx(0.5, abs=0.08)
    assert retype("replacing cards", None, rng) == "replacing cards"
    # names keep their form, and no number is drawn that ordinary text seldom uses
    # (wordfreq: "marches" and "datum" are rarer than once per million words)
    assert {retype("night bus march", wn, rng, names={"march"}) for _ in range(50)} == \
        {"night bus march"}
    assert "night bus marches" in {retype("night bus march", wn, rng) for _ in range(50)}
    assert {retype("export data", wn, rng) for _ in range(50)} == {"export data"}


@pytest.mark.skipif(REAL is None, reason="WordNet 3.0 not installed (Debian wordnet-base)")
def test_words_whose_base_forms_disagree_are_not_swapped():
    from trawl.synth.paraphrase import Rewording

    wn = load_wordnet()
    rw = Rewording(wn)
    # index.noun lists "receipts" (revenue) as a lemma of its own besides "receipt"
    assert wn.base_forms("receipts", "n") == ["receipts", "receipt"]
    assert rw.sense("receipts", "n") is None and rw.alternatives("receipts") == []
    assert "revenue" not in rw.alternatives("receipts")
    # two-letter words are abbreviations: "pt" (part) is no "platinum", "ft" no "foot"
    assert "platinum" in {lemma for off in wn.senses("pt", "n")
                          for lemma in wn.synset("n", off).lemmas}
    assert rw.alternatives("pt") == [] and rw.alternatives("ft") == []
    # names are never swapped
    assert Rewording(wn, names=frozenset({"cars"})).reword("cars", 1.0, random.Random(0)) \
        == "cars"
