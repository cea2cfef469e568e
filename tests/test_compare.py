"""Comparisons with a baseline: hand-computed exact p-values, Holm, marks, the command."""

from __future__ import annotations

import csv
import json

import numpy as np
import pytest

from trawl.catalogue import load_catalogue
from trawl.compare import CSV_COLUMNS, compare_runs
from trawl.errors import UsageError
from trawl.judgments import read_qrels
from trawl.runs import make_run, read_run, write_run
from trawl.stats import holm

from .conftest import invoke
from .scoring_data import write_collection


@pytest.fixture
def files(tmp_path):
    return write_collection(tmp_path)


@pytest.fixture
def comparison(files):
    return compare_runs(read_qrels(files["qrels"]),
                        [read_run(files["dense"]), read_run(files["lexical"])], ["hit@1"],
                        catalogue=load_catalogue(files["catalogue"]), resamples=1000)


def test_rows_by_hand(comparison):
    # hit@1 per query (scoring_data.py): dense 1 1 0 0 0 0, lexical 1 0 1 1 1 0,
    # so lexical - dense = (0, -1, 1, 1, 1, 0).
    rows = {r.type: r for r in comparison.rows}
    assert list(rows) == [None, "article", "faq", "form", "screen"]
    all_ = rows[None]
    assert (all_.run, all_.baseline, all_.metric, all_.n) == ("lexical", "dense", "hit@1", 6)
    assert all_.baseline_mean == pytest.approx(2 / 6) and all_.run_mean == pytest.approx(4 / 6)
    assert all_.diff == pytest.approx(1 / 3)
    # Exact sign-flip test (2^6 patterns <= resamples): four non-zero differences of
    # size 1 with sum 2; |flipped sum| >= 2 unless two signs flip each way: 1 - 6/16.
    assert all_.p_randomisation == pytest.approx(10 / 16)
    # screen (q1, q4, q5): differences (0, 1, 1): |sum| >= 2 for 2 of 4 patterns
    assert rows["screen"].p_randomisation == pytest.approx(0.5)
    # one query: both sign patterns are as extreme as the observed one
    assert rows["article"].p_randomisation == 1.0 and rows["article"].diff == -1.0
    # fewer than stats.MIN_QUERIES queries: no bootstrap interval or p-value, and why
    assert np.isnan(rows["article"].p_bootstrap) and np.isnan(rows["article"].low)
    assert rows["article"].note == "too few queries"
    # effect size: mean 1/3 over the sample sd sqrt(2/3) of the differences
    assert all_.effect == pytest.approx((1 / 3) / np.sqrt(2 / 3))


def test_holm_runs_within_each_family(files):
    # Three runs against the baseline on two metrics: the headline family is the first
    # metric over all queries (2 rows, corrected together); every other (metric, type)
    # family is exploratory and corrected only within itself.
    qrels = read_qrels(files["qrels"])
    dense, lexical = read_run(files["dense"]), read_run(files["lexical"])
    twin = make_run("twin", {q: list(reversed(p)) for q, p in lexical.results.items()})
    comp = compare_runs(qrels, [dense, lexical, twin], ["hit@1", "mrr@10"], resamples=200,
                        catalogue=load_catalogue(files["catalogue"]))
    families: dict = {}
    for r in comp.rows:
        families.setdefault((r.metric, r.type), []).append(r)
    assert len(families) == 2 * 5
    for (metric, group), rows in families.items():
        assert len(rows) == 2
        assert [r.p_corrected for r in rows] == pytest.approx(
            list(holm([r.p_randomisation for r in rows])))
        want = "headline" if (metric, group) == ("hit@1", None) else "exploratory"
        assert {r.family for r in rows} == {want}
    assert comp.groups == {None: 6, "article": 1, "faq": 1, "form": 1, "screen": 3}


def test_few_queries_per_type_are_warned_about(comparison):
    few = [w for w in comparison.warnings if w.startswith(("type ", "all "))]
    tail = ("its differences and p-values say little; fewer than 10: no bootstrap interval "
            "or bootstrap p-value (too few queries), and the exact randomisation p-value "
            "cannot fall below")
    assert few == [
        f"all queries: only 6 queries (fewer than 20); {tail} 0.0312",
        f"type 'article': only 1 query (fewer than 20); {tail} 1",
        f"type 'faq': only 1 query (fewer than 20); {tail} 1",
        f"type 'form': only 1 query (fewer than 20); {tail} 1",
        f"type 'screen': only 3 queries (fewer than 20); {tail} 0.25",
    ]


def test_baseline_choice(files):
    qrels = read_qrels(files["qrels"])
    runs = [read_run(files["dense"]), read_run(files["lexical"])]
    comp = compare_runs(qrels, runs, ["hit@1"], baseline="lexical", resamples=100)
    assert comp.baseline == "lexical" and comp.runs == ("lexical", "dense")
    assert comp.rows[0].diff == pytest.approx(-1 / 3)
    with pytest.raises(UsageError, match="baseline 'sparse' is not one of the runs: dense, "
                                         "lexical"):
        compare_runs(qrels, runs, baseline="sparse")
    with pytest.raises(UsageError, match="at least two runs"):
        compare_runs(qrels, runs[:1])


def test_identical_runs_differ_by_nothing(files):
    qrels = read_qrels(files["qrels"])
    dense = read_run(files["dense"])
    twin = make_run("twin", dense.results)
    comp = compare_runs(qrels, [dense, twin], ["ndcg@10", "mrr@10"], resamples=200)
    for r in comp.rows:  # 6 queries: too few for a bootstrap (stats.MIN_QUERIES)
        assert (r.diff, r.p_randomisation, r.effect, r.note) == (0.0, 1.0, 0.0,
                                                                 "too few queries")


def test_as_dict_rows_carry_every_field(comparison):
    d = comparison.as_dict()
    json.dumps(d)
    assert d["baseline"] == "dense" and d["interval"] == "percentile" and d["alpha"] == 0.05
    assert d["correction"].startswith("holm over the p_randomisation within each family: "
                                      "the headline family is every run vs the baseline "
                                      "on hit@1 over all queries")
    assert d["groups"][0] == {"type": None, "n": 6}
    # scoring_data.py: q1-q5 have a type, q4 two (form, screen), q6 none: 5 + 1 rows of 6
    assert d["type_rule"].endswith("; the per-type rows count 6 queries: 5 of the 6 judged "
                                   "queries have a type, 1 of them counts toward more than "
                                   "one (+1), and 1 toward none")
    assert set(d["rows"][0]) == set(CSV_COLUMNS)
    assert (d["rows"][1]["type"], d["rows"][1]["n"], d["rows"][1]["low"]) == ("article", 1, None)


# --- the command --------------------------------------------------------------------------------

@pytest.fixture
def clear_difference(tmp_path):
    """60 queries; 'better' finds the wanted item first for 50, 'worse' for 20."""
    qrels, good, bad = {}, {}, {}
    for q in range(60):
        qid = f"q{q:02d}"
        qrels[qid] = {f"want-{q}": 1}
        hit, miss = [(f"want-{q}", 2.0), ("noise", 1.0)], [("noise", 2.0), (f"want-{q}", 1.0)]
        good[qid] = hit if q < 50 else miss
        bad[qid] = hit if q < 20 else miss
    (tmp_path / "c.qrels").write_text("".join(f"{q} 0 {i} 1\n" for q, d in qrels.items()
                                              for i in d))
    write_run(tmp_path / "worse.run", make_run("worse", bad))
    write_run(tmp_path / "better.run", make_run("better", good))
    return tmp_path


def test_compare_command_shows_significance_at_a_glance(clear_difference):
    d = clear_difference
    res = invoke(["compare", d / "c.qrels", d / "worse.run", d / "better.run", "-m", "hit@1",
                  "-m", "mrr@10", "-q"])
    assert res.exit_code == 0, res.output
    decision, table = res.stdout.split("\n\n", 1)
    # the decision first, on the first metric asked for; no latency files beside the runs
    assert decision.splitlines()[0].startswith(
        f"decision (hit@1 on {d / 'c.qrels'}, margin 0.01): ship better: best hit@1 0.833, "
        "ahead of worse (difference -0.500, 95% interval ")
    assert decision.splitlines()[-1] == (
        "  note: no latency or index size for worse, better (no RUN.latency.json beside the "
        "run): the decision weighs quality only for them")
    lines = table.splitlines()
    assert lines[0] == ("baseline worse; 60 queries; paired bootstrap (percentile, 10000 "
                        "resamples, seed 0) and sign-flip randomisation test")
    assert lines[3].split() == ["all", "60", "worse", "0.333", "0.667"]
    assert lines[4].split() == ["better", "0.833", "+0.500", "▲", "0.917", "+0.250", "▲"]
    assert ("marks: ▲ better than the baseline, ▼ worse, · no clear difference (corrected p "
            "at or above alpha)") in lines
    assert ("corrected p: sign-flip randomisation test, Holm-corrected within families; "
            "headline family: 1 comparison (hit@1, all queries); other metrics and types "
            "are exploratory, each corrected only within itself; alpha 0.05") in lines


def test_compare_command_long_json_and_csv(clear_difference, tmp_path):
    d = clear_difference
    args = ["compare", d / "c.qrels", d / "worse.run", d / "better.run", "-m", "hit@1",
            "--resamples", "2000", "--seed", "3"]
    long = invoke(args + ["--long"])
    assert long.exit_code == 0
    row = long.stdout.split("\n\n", 1)[1].splitlines()[3].split()
    assert row[:5] == ["all", "60", "better", "hit@1", "+0.500"] and row[-1] == "▲"
    out = tmp_path / "rows.csv"
    res = invoke(args + ["--json", "--csv", out])
    data = json.loads(res.stdout)
    assert data["resamples"] == 2000 and data["seed"] == 3
    r = data["rows"][0]
    assert r["diff"] == pytest.approx(0.5) and r["low"] < 0.5 < r["high"]
    assert r["p_randomisation"] == pytest.approx(1 / 2001)
    written = list(csv.DictReader(out.open()))
    assert list(written[0]) == list(CSV_COLUMNS)
    assert float(written[0]["diff"]) == pytest.approx(0.5)
    again = invoke(args + ["--json"])
    assert again.stdout == res.stdout  # same seed, same bytes


def test_compare_command_baseline_by_file(clear_difference):
    d = clear_difference
    res = invoke(["compare", d / "c.qrels", d / "worse.run", d / "better.run", "-m", "hit@1",
                  "--baseline", str(d / "better.run"), "--json"])
    assert json.loads(res.stdout)["baseline"] == "better"


@pytest.mark.parametrize("extra, says", [
    (["--long", "--json"], "error: --long and --json conflict"),
    (["--baseline", "sparse"], "error: baseline 'sparse' is not one of the runs: worse, "
                               "better"),
])
def test_compare_command_rejects(clear_difference, extra, says):
    d = clear_difference
    res = invoke(["compare", d / "c.qrels", d / "worse.run", d / "better.run", *extra])
    assert res.exit_code == 2 and res.stderr.startswith(says)


def test_compare_command_needs_two_runs(clear_difference):
    d = clear_difference
    res = invoke(["compare", d / "c.qrels", d / "worse.run"])
    assert res.exit_code == 2
    assert res.stderr.startswith("error: compare needs at least two RUN files")


def test_an_evaluation_warns_once_per_group_with_too_few_queries(files):
    """eval's warning list held 'type 'form': only 5 queries (fewer than 10): no bootstrap
    interval' from scoring and again, longer, from the comparison: each group once."""
    from trawl.pipeline.assembly import merged_warnings
    from trawl.scores import score_runs

    qrels, cat = read_qrels(files["qrels"]), load_catalogue(files["catalogue"])
    runs = [read_run(files["dense"]), read_run(files["lexical"])]
    scoring = score_runs(qrels, runs, ["hit@1"], cat, resamples=200).warnings
    comparing = compare_runs(qrels, runs, ["hit@1"], catalogue=cat, resamples=200).warnings
    assert any("type 'screen': only 3 queries" in w for w in scoring)  # said twice before
    merged = merged_warnings(scoring, comparing)
    for group in ("all queries", "type 'article'", "type 'faq'", "type 'form'",
                  "type 'screen'"):
        assert sum(w.startswith(f"{group}: only ") for w in merged) == 1, group
    others = [w for w in list(scoring) + list(comparing) if "too few queries" not in w]
    assert others and all(w in merged for w in others)  # nothing else is lost
    assert len(merged) == len(set(merged))
