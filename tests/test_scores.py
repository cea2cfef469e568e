"""Scores per query, overall and per destination type; the `score` command."""

from __future__ import annotations

import csv
import json

import pytest

from trawl.catalogue import load_catalogue
from trawl.destinations import query_types
from trawl.errors import UsageError
from trawl.judgments import read_qrels
from trawl.runs import Run, make_run, read_run
from trawl.scores import read_runs, score_runs

from .conftest import invoke
from .scoring_data import write_collection


@pytest.fixture
def files(tmp_path):
    return write_collection(tmp_path)


@pytest.fixture
def loaded(files):
    return (read_qrels(files["qrels"]), [read_run(files["dense"]), read_run(files["lexical"])],
            load_catalogue(files["catalogue"]))


def test_query_types_follow_the_best_graded_items(loaded):
    qrels, _, cat = loaded
    qrels["q7"] = {"nowhere": 2, "faq-pets": 1}  # best item unknown: no type
    types, warnings = query_types(qrels, cat)
    assert types == {"q1": ("screen",), "q2": ("article",), "q3": ("faq",),
                     "q4": ("form", "screen"), "q5": ("screen",)}
    assert warnings == [
        f"judged items not in the catalogue {cat.path}: 1: nowhere",
        "queries whose best-graded items are all missing from the catalogue "
        "(so in no destination type): 1: q7"]


def test_means_overall_and_per_type_by_hand(loaded):
    # hand-computed from the table in scoring_data.py
    qrels, runs, cat = loaded
    rep = score_runs(qrels, runs, ["hit@1", "mrr@10"], cat)
    assert rep.runs == ("dense", "lexical") and rep.qids == ("q1", "q2", "q3", "q4", "q5", "q6")
    assert rep.overall.loc["dense"].tolist() == pytest.approx([2 / 6, 2.5 / 6])
    assert rep.overall.loc["lexical"].tolist() == pytest.approx([4 / 6, 4.5 / 6])
    per_type = rep.per_type
    assert per_type.loc[("dense", "screen")].tolist() == pytest.approx([3, 1 / 3, 1 / 3])
    assert per_type.loc[("lexical", "article")].tolist() == pytest.approx([1, 0.0, 0.5])
    assert per_type.loc[("dense", "form")].tolist() == pytest.approx([1, 0.0, 0.0])
    assert list(per_type.index.get_level_values("type").unique()) == [
        "article", "faq", "form", "screen"]


def test_per_query_table_is_long_with_types(loaded):
    qrels, runs, cat = loaded
    pq = score_runs(qrels, runs, ["hit@1"], cat).per_query
    assert list(pq.columns) == ["run", "qid", "types", "hit@1"]
    assert len(pq) == 12
    row = pq[(pq.run == "lexical") & (pq.qid == "q4")].iloc[0]
    assert (row["types"], row["hit@1"]) == ("form screen", 1.0)


def test_warnings_name_missing_extra_and_unknown(loaded):
    qrels, runs, cat = loaded
    rep = score_runs(qrels, runs, ["hit@1"], cat)
    assert rep.warnings == (
        "queries with no item graded >= 1: 1; they score 0 on every metric and count in "
        "the means, as TREC evaluation counts them: q6",
        "run 'dense': queries without results, scored 0: 1 of 6: q5",
        "run 'dense': queries not in the qrels, ignored: 1: q9",
        "run 'dense': results naming items not in the catalogue: 1 (query/item): q9/ghost-item",
        "run 'lexical': queries without results, scored 0: 1 of 6: q6",
    )
    # without a catalogue nothing can be said about unknown items or types
    bare = score_runs(qrels, runs, ["hit@1"])
    assert not any("catalogue" in w for w in bare.warnings)
    assert bare.per_type.empty and bare.as_dict()["type_rule"] is None


def test_as_dict_is_complete_and_json_ready(loaded):
    qrels, runs, cat = loaded
    d = score_runs(qrels, runs, ["mrr@10"], cat, resamples=200, seed=1).as_dict()
    json.dumps(d)
    assert set(d) == {"metrics", "runs", "queries", "type_rule", "scores", "per_query",
                      "warnings"}
    first = d["scores"][0]
    assert first["run"] == "dense" and first["type"] is None and first["n"] == 6
    assert first["mean"] == pytest.approx(2.5 / 6)
    # 6 queries are fewer than stats.MIN_QUERIES: no interval, and the row says why
    assert (first["low"], first["high"], first["note"]) == (None, None, "too few queries")
    screen = [s for s in d["scores"] if s["type"] == "screen"]
    assert [(s["run"], s["n"]) for s in screen] == [("dense", 3), ("lexical", 3)]


def test_intervals_are_seeded(loaded):
    qrels, runs, cat = loaded
    a = score_runs(qrels, runs, ["mrr@10"], cat, resamples=300, seed=4).as_dict()
    b = score_runs(qrels, runs, ["mrr@10"], cat, resamples=300, seed=4).as_dict()
    assert a == b


def test_run_names_must_differ(loaded):
    qrels, runs, _ = loaded
    with pytest.raises(UsageError, match="two runs are named 'dense'") as err:
        score_runs(qrels, [runs[0], Run("dense", runs[1].results)])
    # the message is for a command-line user too: no Python function to go and call
    assert "trawl." not in str(err.value) and "given twice" in str(err.value)


def test_read_runs_names_by_file_when_tags_repeat(tmp_path, files):
    copy = tmp_path / "dense-again.run"
    copy.write_text(files["dense"].read_text())
    assert [r.name for r in read_runs([files["dense"], files["lexical"]])] == ["dense",
                                                                              "lexical"]
    assert [r.name for r in read_runs([files["dense"], copy])] == ["dense", "dense-again"]


def test_a_single_run_object_is_accepted():
    rep = score_runs({"q": {"a": 1}}, make_run("only", {"q": [("a", 1.0)]}), ["hit@1"])
    assert rep.overall.loc["only", "hit@1"] == 1.0


# --- the command --------------------------------------------------------------------------------

EXPECTED_TABLE = """\
6 queries, 2 run(s); means over all queries
run      hit@1  mrr@10
-------  -----  ------
dense    0.333   0.417
lexical  0.667   0.750

per destination type (a query counts toward the destination type of its best-graded relevant items; a query whose best items have several types counts toward each)
type     queries  run      hit@1  mrr@10
-------  -------  -------  -----  ------
article        1  dense    1.000   1.000
                  lexical  0.000   0.500
faq            1  dense    0.000   0.500
                  lexical  1.000   1.000
form           1  dense    0.000   0.000
                  lexical  1.000   1.000
screen         3  dense    0.333   0.333
                  lexical  1.000   1.000

5 warning(s):
"""


def test_score_command_prints_the_hand_computed_table(files):
    res = invoke(["score", files["qrels"], files["dense"], files["lexical"], "-c",
                  files["catalogue"], "-m", "hit@1", "-m", "mrr@10"])
    assert res.exit_code == 0
    assert res.stdout.startswith(EXPECTED_TABLE)
    assert "  warning: run 'dense': queries without results, scored 0: 1 of 6: q5\n" in res.stdout


def test_score_command_json_and_files(files, tmp_path):
    pq_csv, pq_json, means = tmp_path / "pq.csv", tmp_path / "pq.json", tmp_path / "m.csv"
    res = invoke(["score", files["qrels"], files["dense"], "-m", "mrr@10", "--json",
                  "--per-query", pq_csv, "--csv", means])
    assert res.exit_code == 0
    d = json.loads(res.stdout)
    assert d["qrels"] == str(files["qrels"]) and d["metrics"] == ["mrr@10"]
    assert d["scores"][0]["mean"] == pytest.approx(2.5 / 6)
    rows = list(csv.DictReader(pq_csv.open()))
    assert [(r["qid"], float(r["mrr@10"])) for r in rows] == [
        ("q1", 1.0), ("q2", 1.0), ("q3", 0.5), ("q4", 0.0), ("q5", 0.0), ("q6", 0.0)]
    assert list(csv.DictReader(means.open()))[0] == {
        "run": "dense", "metric": "mrr@10", "type": "", "n": "6",
        "mean": repr(2.5 / 6), "low": "", "high": ""}
    res = invoke(["score", files["qrels"], files["dense"], "--per-query", pq_json])
    assert res.exit_code == 0
    assert json.loads(pq_json.read_text())[2]["qid"] == "q3"


@pytest.mark.parametrize("args, says", [
    (["-m", "bleu"], "error: unknown metric 'bleu'"),
    (["--per-query", "out.txt"], "error: --per-query out.txt: name a .csv or .json file"),
])
def test_score_command_rejects_bad_options_before_reading(files, args, says):
    res = invoke(["score", "missing.qrels", "missing.run", *args])
    assert res.exit_code == 2
    assert res.stderr.startswith(says)


def test_score_command_duplicate_run_line_is_a_located_error(files, tmp_path):
    bad = tmp_path / "bad.run"
    bad.write_text("q1 Q0 scr-topup 1 2.0 x\nq1 Q0 art-fares 2 1.0 x\nq1 Q0 scr-topup 3 0.5 x\n")
    res = invoke(["score", files["qrels"], bad])
    assert res.exit_code == 2
    assert res.stderr == (f"error: {bad}:3: duplicate entry for query 'q1', item 'scr-topup' "
                          "(first on line 1)\n")


def test_silver_judgments_are_marked_as_estimates(files, tmp_path):
    silver = tmp_path / "made.qrels"
    silver.write_text(files["qrels"].read_text())
    plain = invoke(["score", silver, files["dense"], "-m", "hit@1"])
    assert "estimate" not in plain.stdout
    flagged = invoke(["score", silver, files["dense"], "-m", "hit@1", "--silver"])
    assert flagged.stdout.splitlines()[-1].startswith(
        f"note: {silver} holds silver (machine-made) judgments, so every figure above is an "
        "estimate")
    # a catalogue that happens to share the name is not provenance: still not silver
    (tmp_path / "made.jsonl").write_text('{"id": "faq-pets", "type": "faq", "title": "Pets"}\n')
    assert json.loads(invoke(["misses", silver, files["dense"], "-c", files["catalogue"],
                              "--json"]).stdout)["silver"] is False
    (tmp_path / "made.jsonl").write_text("".join(  # a `trawl synth` provenance file beside it
        json.dumps({"qid": q, "text": "x", "source": "faq-pets", "style": "keyword", "seed": 0})
        + "\n" for q in read_qrels(silver)))
    auto = invoke(["misses", silver, files["dense"], "-c", files["catalogue"], "--json"])
    assert json.loads(auto.stdout)["silver"] is True
    assert "holds silver" in invoke(["compare", silver, files["dense"], files["lexical"],
                                     "-q"]).stdout
