"""One grammar for numbers in runs and qrels (stated in trawl.numbers): each notation is
fed to every reader, which must all agree on it.

Before, grades went through Python's int() and scores through float(), so a qrels
grade "1_0" read as 10 and "٣" (an Arabic-Indic digit) as 3, a run score "inf" was
accepted while "nan" was refused, and "2.0" was a grade in a review sheet but an error
in qrels.
"""

from __future__ import annotations

import pytest

from trawl import runs as runs_mod
from trawl.errors import InputError, UsageError
from trawl.judgments import read_qrels
from trawl.numbers import parse_score, parse_whole
from trawl.runs import make_run, read_run, write_run

WHOLE_OK = {"2": 2, "-1": -1, "+3": 3, "007": 7, "2.0": 2, "1.00": 1, "1.": 1, "0": 0}
WHOLE_BAD = ["2.5", "2e0", "1_0", "\u0663", "\uff11", "0x1F", "inf", "nan", "two",
             "9" * 19]
SCORE_OK = {"12": 12.0, "0.5": 0.5, ".5": 0.5, "5.": 5.0, "-3.25": -3.25, "1.5e-3": 0.0015,
            "2E+10": 2e10, "+1": 1.0, "007": 7.0, "-0": 0.0}
SCORE_BAD = ["nan", "NaN", "inf", "-inf", "Infinity", "1e999", "1_000", "0x1F", "\u0663",
             "1,5", "1.5f", "e3", "."]


def qrels_with(grade: str, tmp_path):
    path = tmp_path / "g.qrels"
    path.write_text(f"q1 0 d1 1\nq1 0 d2 {grade}\n", encoding="utf-8")
    return read_qrels(path)


def run_with(tmp_path, score: str = "0.5", rank: str = "2", careful: bool = False):
    path = tmp_path / "r.run"
    path.write_text(f"q1 Q0 d1 1 0.9 t\nq1 Q0 d2 {rank} {score} t\n", encoding="utf-8")
    if careful:  # the line-by-line reader, which the column reader hands odd files to
        return runs_mod._read_lines(path, path.read_text(encoding="utf-8"), None)
    return read_run(path)


@pytest.mark.parametrize("text, value", WHOLE_OK.items())
def test_whole_numbers_read_alike_as_grade_and_rank(tmp_path, text, value):
    assert parse_whole(text) == value
    assert qrels_with(text, tmp_path)["q1"]["d2"] == value
    for careful in (False, True):
        assert dict(run_with(tmp_path, rank=text, careful=careful).results["q1"])["d2"] == 0.5


@pytest.mark.parametrize("text", WHOLE_BAD)
def test_not_whole_numbers_are_refused_as_grade_and_rank_naming_line_and_field(tmp_path, text):
    assert parse_whole(text) is None
    with pytest.raises(InputError, match=r"g\.qrels:2: grade: .* is not a whole number; "
                                         r"write whole numbers"):
        qrels_with(text, tmp_path)
    for careful in (False, True):
        with pytest.raises(InputError, match=r"r\.run:2: rank: .* is not a whole number"):
            run_with(tmp_path, rank=text, careful=careful)


@pytest.mark.parametrize("text, value", SCORE_OK.items())
def test_scores_in_every_stated_notation_are_read_by_both_run_readers(tmp_path, text, value):
    assert parse_score(text) == value
    for careful in (False, True):
        assert dict(run_with(tmp_path, score=text, careful=careful).results["q1"])["d2"] == value


@pytest.mark.parametrize("text", SCORE_BAD)
def test_scores_outside_the_grammar_are_refused_by_both_run_readers(tmp_path, text):
    assert parse_score(text) is None
    for careful in (False, True):
        with pytest.raises(InputError, match=r"r\.run:2: score: .* is not a number trawl "
                                             r"reads; write finite numbers"):
            run_with(tmp_path, score=text, careful=careful)


def test_a_grade_written_as_a_score_is_refused_where_a_whole_number_is_needed(tmp_path):
    # "1.5e0" is a score, never a grade; the message says what a grade may be
    with pytest.raises(InputError) as exc:
        qrels_with("1.5e0", tmp_path)
    assert str(exc.value) == (f"{tmp_path / 'g.qrels'}:2: grade: grade '1.5e0' is not a whole "
                              "number; write whole numbers of up to 18 digits such as 0, 1, "
                              "2 or -1")


def test_writer_never_writes_a_score_the_readers_refuse(tmp_path):
    for bad in (float("inf"), float("-inf"), float("nan")):
        with pytest.raises(UsageError, match="run 'r': query 'q1', item 'd1' has score"):
            write_run(tmp_path / "r.run", make_run("r", {"q1": [("d1", bad)]}))
        assert not (tmp_path / "r.run").exists()  # nothing half-written
    write_run(tmp_path / "ok.run", make_run("r", {"q1": [("d1", 1e-300), ("d2", -0.0)]}))
    assert dict(read_run(tmp_path / "ok.run").results["q1"]) == {"d1": 1e-300, "d2": 0.0}


@pytest.mark.parametrize("verdict, ok", [("2.0", True), ("1", True), ("1e0", False),
                                         ("0_1", False), ("\u0661", False)])
def test_review_sheet_grades_follow_the_qrels_grammar(tmp_path, verdict, ok):
    # before, a sheet took float(): "1e0" and "0_1" were grade 1 there, errors in qrels
    from trawl.catalogue import Catalogue, Item
    from trawl.review import read_sheet

    cat = Catalogue("c.jsonl", (Item("kb-fares", "faq", "Fares"),))
    path = tmp_path / "s.csv"
    path.write_text("# grade scale: 0-2\nqid,item_id,reason,silver_grade,verdict\n"
                    f"s1,kb-fares,silver,2,{verdict}\n", encoding="utf-8")
    if ok:
        assert str(parse_whole(verdict)) == read_sheet(path, cat).rows[0].verdict
    else:
        with pytest.raises(InputError, match=r"s\.csv:3: verdict: .* is not allowed"):
            read_sheet(path, cat)
        with pytest.raises(InputError, match="grade"):
            qrels_with(verdict, tmp_path)
