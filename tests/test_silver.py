"""Silver sets: file names, telling silver from human by the sidecar's content, styles,
the description of how a set was made, and the note beside silver figures.

All data is invented (a transit rider app).
"""

from __future__ import annotations

import json

import pytest

from trawl.errors import InputError
from trawl.judgments import read_qrels
from trawl.queries import read_queries
from trawl.silver import (QUALITY_DOC, MeasuredAgreement, SilverFiles, describe_silver,
                          find_provenance, is_silver, query_styles, read_styles, silver_note,
                          write_silver)
from trawl.synth import SilverSet

MADE = [("s1", "zone 2 fare", "kb-fares", "keyword"),
        ("s2", "how do i get a refund", "frm-refund", "question"),
        ("s3", "lost my bag on the bus", "faq-lost", "paraphrase")]


def silver_set() -> SilverSet:
    return SilverSet({q: text for q, text, _, _ in MADE}, {q: {item: 2} for q, _, item, _ in MADE},
                     tuple({"qid": q, "text": text, "source": item, "style": style, "seed": 4}
                           for q, text, item, style in MADE), {})


def test_write_silver_lays_out_the_three_files_and_reads_back(tmp_path):
    paths = write_silver(tmp_path / "qf", silver_set())
    files = SilverFiles.at(tmp_path / "qf")
    assert paths == [tmp_path / "qf.queries.tsv", tmp_path / "qf.qrels", tmp_path / "qf.jsonl"]
    assert paths == [files.queries, files.qrels, files.provenance]
    assert read_queries(files.queries) == {q: text for q, text, _, _ in MADE}
    assert read_qrels(files.qrels) == {q: {item: 2} for q, _, item, _ in MADE}
    assert find_provenance(files.qrels) == files.provenance and is_silver(files.qrels)
    assert read_styles(files.provenance) == {"s1": "keyword", "s2": "question",
                                             "s3": "paraphrase"}
    assert describe_silver(files.provenance) == (
        "synthesised from the catalogue by trawl synth (keyword 1, paraphrase 1, question 1; "
        "seed 4)")


@pytest.mark.parametrize("sidecar", [
    '{"id": "kb-fares", "type": "article", "title": "Fares"}\n',  # a catalogue
    "",                                                            # empty
    "not json at all\n",
    '["qid", "source", "style"]\n',
])
def test_a_file_named_like_provenance_does_not_make_judgments_silver(tmp_path, sidecar):
    (tmp_path / "gold.qrels").write_text("h1 0 kb-fares 2\n")
    (tmp_path / "gold.jsonl").write_text(sidecar)
    assert find_provenance(tmp_path / "gold.qrels") is None
    assert not is_silver(tmp_path / "gold.qrels")


def test_only_a_qrels_file_has_a_sidecar(tmp_path):
    write_silver(tmp_path / "qf", silver_set())
    (tmp_path / "qf.txt").write_text("s1 0 kb-fares 2\n")
    assert find_provenance(tmp_path / "qf.txt") is None


def test_query_styles_prefers_the_file_given_and_otherwise_finds_the_sidecar(tmp_path):
    files = SilverFiles.at(tmp_path / "qf")
    write_silver(tmp_path / "qf", silver_set())
    other = tmp_path / "other.jsonl"
    other.write_text(json.dumps({"qid": "s1", "style": "typo"}) + "\n")
    assert query_styles(files.qrels) == (read_styles(files.provenance), files.provenance)
    assert query_styles(files.qrels, other) == ({"s1": "typo"}, other)
    (tmp_path / "gold.qrels").write_text("h1 0 kb-fares 2\n")
    assert query_styles(tmp_path / "gold.qrels") == (None, None)


def test_a_broken_provenance_line_is_located(tmp_path):
    path = tmp_path / "p.jsonl"
    path.write_text('{"qid": "s1", "style": "keyword"}\n{"qid": \n')
    with pytest.raises(InputError, match=r"p\.jsonl:2: malformed JSON"):
        describe_silver(path)


def test_the_silver_note_says_estimates_and_points_to_the_quality_page():
    after_table = silver_note("s.qrels")
    assert after_table.startswith("note: s.qrels holds silver (machine-made) judgments, so "
                                  "every figure above is an estimate")
    assert after_table.endswith(f"see {QUALITY_DOC}")
    assert silver_note() == ("silver judgments: figures are estimates; agreement with human "
                             f"judgments not measured; see {QUALITY_DOC}")
    measured = MeasuredAgreement.from_dict("gold set", {"value": 0.8667, "low": 0.6, "high": 1})
    assert silver_note(measured=measured) == (
        "silver judgments: figures are estimates; system rankings against gold set: "
        f"Kendall's tau 0.87 (0.60 to 1.00); see {QUALITY_DOC}")
    firm = MeasuredAgreement("gold set", 0.12, 0.06, 0.94, settled=19, swapped=0)
    assert silver_note(measured=firm) == (
        "silver judgments: figures are estimates; system rankings against gold set: "
        "Kendall's tau 0.12 (0.06 to 0.94), swapping 0 of the 19 pairs of systems gold set "
        f"settles; see {QUALITY_DOC}")
    unknown = MeasuredAgreement("gold set", float("nan"))
    assert "Kendall's tau not computable; see" in silver_note(measured=unknown)
