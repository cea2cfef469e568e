"""Consensus neighbours: extra grade-1 silver judgments on a tiny invented catalogue
(a community library app), and the CLI switches for them."""

from __future__ import annotations

import pytest

from trawl.catalogue import Catalogue, Item
from trawl.errors import UsageError
from trawl.synth import SynthSettings, synthesise
from trawl.synth.neighbours import consensus_neighbours, neighbour_depth
from trawl.synth.overlap import OverlapProfile

from .conftest import invoke

ITEMS = (
    Item("lost", "article", "Lost library card", "Report a lost library card and get a new card."),
    Item("stolen", "faq", "My library card was stolen", "Report a stolen library card; "
         "we block the card and print a new library card."),
    Item("rooms", "screen", "Study rooms", "Book a quiet study room for two hours."),
    Item("quiet", "faq", "Is there a quiet room to study?", "Quiet study rooms can be booked."),
    Item("films", "form", "Suggest a film", "Ask us to buy a film missing from the shelves."),
)
CAT = Catalogue("nb.jsonl", ITEMS)
KEEP_ALL = OverlapProfile((1.0,), 1.0, "test: keep everything")


def test_depth_scales_with_small_catalogues():
    # NEIGHBOUR_DEPTH 10, at most 2.5% of the catalogue, at least 1
    assert [neighbour_depth(n) for n in (1, 5, 100, 200, 400, 1400, 10**6)] == \
        [1, 1, 2, 5, 10, 10, 10]


def test_each_item_is_paired_with_the_one_on_its_topic(tmp_path):
    # Hand-checked: the two card items share "library card ... report ... new", the two
    # room items share "quiet study room(s)"; both encoders must agree on the pairing.
    near = consensus_neighbours(CAT, ["lost", "stolen", "rooms", "quiet"], ("minilm", "bm25"),
                                depth=1, cache_dir=tmp_path)
    assert near == {"lost": ("stolen",), "stolen": ("lost",), "rooms": ("quiet",),
                    "quiet": ("rooms",)}


def test_only_items_every_encoder_agrees_on_count(tmp_path):
    wide = consensus_neighbours(CAT, ["lost"], ("bm25",), depth=4, cache_dir=tmp_path)
    # "films" shares no word with "lost", so bm25 cannot rank it at all
    assert "films" not in wide["lost"] and wide["lost"][0] == "stolen"
    both = consensus_neighbours(CAT, ["lost"], ("bm25", "minilm"), depth=4, cache_dir=tmp_path)
    assert set(both["lost"]) <= set(wide["lost"])
    with pytest.raises(UsageError, match="depth 0"):
        consensus_neighbours(CAT, ["lost"], ("bm25",), depth=0)


def test_silver_judges_neighbours_at_the_related_grade(tmp_path):
    s = synthesise(CAT, SynthSettings(styles="keyword", profile=KEEP_ALL, neighbours=("bm25",),
                                      neighbour_depth=1), cache_dir=tmp_path, quiet=True)
    for rec in s.provenance:
        grades = s.qrels[rec["qid"]]
        if rec["source"] == "lost" and set(rec["sources"]) == {"lost"}:
            assert grades == {"lost": 2, "stolen": 1}
        assert all(g in (1, 2) for g in grades.values())
    assert s.summary["neighbours"]["encoders"] == ["bm25"]
    assert s.summary["neighbours"]["judgments_added"] == sum(len(g) - 1 for g in s.qrels.values())
    off = synthesise(CAT, SynthSettings(styles="keyword", profile=KEEP_ALL, neighbours=()),
                     quiet=True)
    assert all(set(g.values()) == {2} for g in off.qrels.values())
    assert off.summary["neighbours"]["judgments_added"] == 0
    none = synthesise(CAT, SynthSettings(styles="keyword", profile=KEEP_ALL, related_grade=0,
                                         neighbours=("bm25",)), cache_dir=tmp_path, quiet=True)
    assert all(set(g.values()) == {2} for g in none.qrels.values())


def test_cli_neighbour_switches(tmp_path):
    cat = tmp_path / "c.jsonl"
    cat.write_text("".join(
        f'{{"id": "{it.id}", "type": "{it.type}", "title": "{it.title}", "text": "{it.text}"}}\n'
        for it in ITEMS))
    r = invoke(["synth", cat, "-o", tmp_path / "s", "--styles", "keyword", "--max-overlap", "1",
                "--neighbours", "bm25", "--neighbour-depth", "1", "--cache-dir", tmp_path / "cache"])
    assert r.exit_code == 0, r.output
    assert "neighbour judgments at grade 1 (items bm25 all place among a source's 1 nearest)" \
        in r.output
    r = invoke(["synth", cat, "-o", tmp_path / "t", "--no-neighbours", "--neighbours", "bm25"])
    assert r.exit_code == 2 and "--no-neighbours contradicts" in r.output
    assert not (tmp_path / "t.qrels").exists()
