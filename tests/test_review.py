"""Review sheets: export, import, the merge rule, reviewer agreement and the CLI.

All data is invented (a transit rider app; tests/review_world.py).
"""

from __future__ import annotations

import csv
import io
import json
from collections import Counter
from pathlib import Path

import pytest

from trawl.destinations import query_types
from trawl.errors import UsageError
from trawl.judgments import read_qrels, write_qrels
from trawl.review import COLUMNS, export_sheet, import_sheets, merge_grades
from trawl.stats import cohen_kappa, wilson_interval

from .conftest import invoke
from .review_world import fill_sheet, make_world, sheet_rows


@pytest.fixture()
def world(tmp_path: Path) -> dict:
    return make_world(tmp_path)


# --- export ---------------------------------------------------------------------------------

def test_export_writes_bom_crlf_notes_header_and_guarded_cells(world):
    out = world["dir"] / "sheet.csv"
    summary = export_sheet(world["qrels"], world["queries"], world["catalogue"], out,
                           styles=world["styles"])
    raw = out.read_bytes()
    assert raw.startswith(b"\xef\xbb\xbf# trawl review sheet. Silver grades are machine")
    assert b"\r\n" in raw and b"\n" not in raw.replace(b"\r\n", b"")
    text = raw.decode("utf-8-sig")
    assert "# grade scale: 0-2\r\n" in text
    assert "qid,query,style,item_id,type,title,snippet,link,reason,silver_grade,verdict,note\r\n" \
        in text
    rows = sheet_rows(out)
    assert len(rows) == 10 and summary.sheets[0].silver_rows == 10
    by_item = {r["item_id"]: r for r in rows}
    assert by_item["scr-wallet"]["title"] == "'=HYPERLINK(\"http://x\",\"Wallet\")"
    assert by_item["'-frm-lost"]["title"] == "Report lost property"
    assert by_item["frm-refund"]["title"] == "'+Request a refund"
    assert by_item["scr-wallet"]["query"] == "'@wallet balance"
    assert by_item["kb-fares"]["snippet"].endswith(" …")
    assert len(by_item["kb-fares"]["snippet"]) <= 242
    assert by_item["kb-fares"]["link"] == "qf://kb/fares"
    assert by_item["kb-fares"]["style"] == "question"
    assert all(r["verdict"] == "" and r["reason"] == "silver" for r in rows)
    # judged pairs per query: highest grade first, then by id
    assert [r["item_id"] for r in rows if r["qid"] == "s4"] == ["'-frm-lost", "faq-lost",
                                                                 "scr-plan"]


def test_query_text_is_scrubbed_by_default_and_counted(world):
    out = world["dir"] / "sheet.csv"
    summary = export_sheet(world["qrels"], world["queries"], world["catalogue"], out)
    assert {r["query"] for r in sheet_rows(out) if r["qid"] == "s4"} == {"lost my bag call [phone]"}
    assert summary.scrubbed == {"email": 0, "phone": 1, "postcode": 0, "number": 0}
    export_sheet(world["qrels"], world["queries"], world["catalogue"], out, scrub_queries=False)
    assert {r["query"] for r in sheet_rows(out) if r["qid"] == "s4"} == {
        "lost my bag call 020 7946 0958"}


def test_pooled_rows_are_unjudged_top_results_without_run_names(world):
    out = world["dir"] / "sheet.csv"
    summary = export_sheet(world["qrels"], world["queries"], world["catalogue"], out,
                           runs=world["runs"], pairs="pooled", depth=2)
    rows = sheet_rows(out)
    assert all(r["reason"] == "pooled" and r["silver_grade"] == "" for r in rows)
    # alpha ranks the catalogue in file order, beta in reverse; top 2 of each, minus judged,
    # ordered by best rank then id.
    s1 = [r["item_id"] for r in rows if r["qid"] == "s1"]
    assert s1 == ["007", "'-frm-lost", "kb-refund"]
    s6 = [r["item_id"] for r in rows if r["qid"] == "s6"]
    assert s6 == ["kb-fares", "'-frm-lost", "kb-refund"]
    assert "alpha" not in out.read_text(encoding="utf-8-sig")
    assert summary.sheets[0].pooled_rows == len(rows)


def test_both_is_the_default_with_runs(world):
    out = world["dir"] / "sheet.csv"
    summary = export_sheet(world["qrels"], world["queries"], world["catalogue"], out,
                           runs=world["runs"], depth=1)
    reasons = Counter(r["reason"] for r in sheet_rows(out))
    assert reasons == {"silver": 10, "pooled": summary.sheets[0].pooled_rows}
    assert summary.sheets[0].pooled_rows > 0


def test_sample_is_stratified_by_type_and_seeded(world, tmp_path):
    cat = world["catalogue"]
    ids = {"article": ["kb-fares", "kb-refund"], "faq": ["faq-cap", "faq-lost", "007"],
           "form": ["frm-refund"]}
    qrels, queries = {}, {}
    for t, n in (("article", 40), ("faq", 20), ("form", 4)):
        for k in range(n):
            qrels[f"{t}{k}"] = {ids[t][k % len(ids[t])]: 2}
            queries[f"{t}{k}"] = f"query {t} {k}"
    out = tmp_path / "s.csv"
    summary = export_sheet(qrels, queries, cat, out, sample=16, seed=1)
    # in proportion to 40 / 20 / 4 of 64 queries: 16 * 40/64 = 10, 16 * 20/64 = 5, 16 * 4/64 = 1
    assert dict(summary.queries_per_type) == {"article": 10, "faq": 5, "form": 1}
    first = out.read_bytes()
    export_sheet(qrels, queries, cat, out, sample=16, seed=1)
    assert out.read_bytes() == first
    export_sheet(qrels, queries, cat, out, sample=16, seed=2)
    assert out.read_bytes() != first


def test_review_types_queries_by_the_rule_scores_use(world, tmp_path):
    # destinations.TYPE_RULE: a query whose best items have two types counts toward each
    cat = world["catalogue"]
    qrels = {"t1": {"kb-fares": 2, "faq-cap": 2, "scr-plan": 1}, "t2": {"scr-plan": 1}}
    queries = {"t1": "fare cap", "t2": "plan a trip"}
    summary = export_sheet(qrels, queries, cat, tmp_path / "t.csv")
    types, _ = query_types(qrels, cat)
    assert types == {"t1": ("article", "faq"), "t2": ("screen",)}
    assert dict(summary.queries_per_type) == {"article": 1, "faq": 1, "screen": 1}


def test_two_reviewers_share_an_overlap_and_split_the_rest(world):
    out = world["dir"] / "pair.csv"
    summary = export_sheet(world["qrels"], world["queries"], world["catalogue"], out,
                           reviewers=2, overlap=0.5, seed=3)
    one, two = (world["dir"] / "pair-1.csv"), (world["dir"] / "pair-2.csv")
    assert [s.path for s in summary.sheets] == [str(one), str(two)]
    q1 = {r["qid"] for r in sheet_rows(one)}
    q2 = {r["qid"] for r in sheet_rows(two)}
    assert len(q1 & q2) == summary.overlap_queries == 3
    assert q1 | q2 == set(world["qrels"])
    assert (len(q1), len(q2)) == (5, 4)  # the 3 other queries dealt in turn: 2 and 1
    assert "reviewer 2 of 2" in two.read_text(encoding="utf-8-sig").splitlines()[0]


@pytest.mark.parametrize("kwargs, message", [
    ({"overlap": 0.3}, "an overlap needs 2 or more reviewers"),
    ({"pairs": "pooled"}, "needs at least one run"),
    ({"reviewers": 2, "overlap": 1.5}, "share of queries"),
    ({"sample": 0}, "sample of 0 queries"),
    ({"max_grade": 1}, "below the highest grade"),
])
def test_export_rejects_conflicting_or_bad_options(world, kwargs, message):
    out = world["dir"] / "x.csv"
    with pytest.raises(UsageError, match=message):
        export_sheet(world["qrels"], world["queries"], world["catalogue"], out, **kwargs)
    assert not out.exists()


def test_export_requires_query_text_and_catalogue_items(world):
    out = world["dir"] / "x.csv"
    queries = dict(world["queries"])
    del queries["s3"]
    with pytest.raises(UsageError, match="'s3' is judged but has no text"):
        export_sheet(world["qrels"], queries, world["catalogue"], out)
    with pytest.raises(UsageError, match="'kb-gone' judged for query 's1' is not in"):
        export_sheet({"s1": {"kb-gone": 1}}, world["queries"], world["catalogue"], out)


# --- import ---------------------------------------------------------------------------------

def test_round_trip_of_an_unchanged_sheet_reproduces_the_qrels_exactly(world):
    out = world["dir"] / "sheet.csv"
    export_sheet(world["qrels"], world["queries"], world["catalogue"], out,
                 runs=world["runs"], depth=3)
    result = import_sheets([out], world["catalogue"])
    assert result.qrels == world["qrels"]
    write_qrels(world["dir"] / "back.qrels", result.qrels)
    assert (world["dir"] / "back.qrels").read_bytes() == \
        (world["dir"] / "silver.qrels").read_bytes()
    rep = result.report
    assert (rep.reviewed, rep.pairs) == (0, len(sheet_rows(out)))
    assert rep.silver_precision.n == 0


def test_verdicts_merge_and_silver_precision_is_reported(world):
    out = world["dir"] / "sheet.csv"
    export_sheet(world["qrels"], world["queries"], world["catalogue"], out,
                 runs=world["runs"], depth=1, styles=world["styles"])
    fill_sheet(out, {("s1", "kb-fares"): "ok", ("s1", "faq-cap"): "no", ("s2", "frm-refund"): "1",
                ("s2", "kb-refund"): " OK ", ("s3", "faq-cap"): "0",
                ("s4", "scr-plan"): "2",  # a silver 0 turned relevant
                ("s6", "kb-fares"): "2",  # a pooled row found relevant
                ("s5", "kb-fares"): "no"})
    result = import_sheets([out], world["catalogue"])
    q = result.qrels
    assert q["s1"] == {"kb-fares": 2, "faq-cap": 0}
    assert q["s2"] == {"frm-refund": 1, "kb-refund": 1}
    assert q["s3"] == {"faq-cap": 0}
    assert q["s4"] == {"-frm-lost": 2, "faq-lost": 1, "scr-plan": 2}  # unreviewed kept
    assert q["s5"] == {"scr-wallet": 2, "kb-fares": 0}
    assert q["s6"] == {"007": 2, "kb-fares": 2}
    rep = result.report
    # silver positives reviewed: s1 x2, s2 x2, s3 -> kept 3 of 5 (s4 scr-plan was silver 0)
    assert (rep.silver_precision.successes, rep.silver_precision.n) == (3, 5)
    assert rep.silver_precision == wilson_interval(3, 5)
    assert {t: (p.successes, p.n) for t, p in rep.precision_by_type.items()} == {
        "article": (2, 2), "faq": (0, 2), "form": (1, 1)}
    assert {s: (p.successes, p.n) for s, p in rep.precision_by_style.items()} == {
        "keyword": (2, 3), "question": (1, 2)}
    assert (rep.pooled_reviewed, rep.pooled_relevant) == (2, 1)
    assert dict(rep.pooled_relevant_by_type) == {"article": 1}
    assert rep.sheets[0].filled == 8 and rep.sheets[0].left == rep.sheets[0].rows - 8


def test_two_reviewers_kappa_disagreements_and_median_merge(world):
    out = world["dir"] / "pair.csv"
    export_sheet(world["qrels"], world["queries"], world["catalogue"], out, reviewers=2,
                 overlap=1.0)
    one, two = world["dir"] / "pair-1.csv", world["dir"] / "pair-2.csv"
    a = {("s1", "kb-fares"): "2", ("s1", "faq-cap"): "1", ("s2", "frm-refund"): "ok",
         ("s2", "kb-refund"): "0", ("s3", "faq-cap"): "2", ("s5", "scr-wallet"): "2"}
    b = {("s1", "kb-fares"): "2", ("s1", "faq-cap"): "0", ("s2", "frm-refund"): "1",
         ("s2", "kb-refund"): "0", ("s3", "faq-cap"): "ok", ("s6", "007"): "no"}
    fill_sheet(one, a)
    fill_sheet(two, b)
    result = import_sheets([one, two], world["catalogue"])
    q = result.qrels
    assert q["s1"] == {"kb-fares": 2, "faq-cap": 0}  # median of 1 and 0 rounds down
    assert q["s2"] == {"frm-refund": 1, "kb-refund": 0}  # ok = 2 and 1 -> 1
    assert q["s5"] == {"scr-wallet": 2} and q["s6"] == {"007": 0}  # one reviewer each
    (agreement,) = result.report.agreement
    # shared reviewed rows, grades in sheet order
    ga, gb = [2, 1, 2, 0, 2], [2, 0, 1, 0, 2]
    assert agreement.n == 5
    assert agreement.kappa == pytest.approx(cohen_kappa(ga, gb, labels=[0, 1, 2]))
    assert agreement.kappa_linear == pytest.approx(
        cohen_kappa(ga, gb, "linear", labels=[0, 1, 2]))
    assert [(d.qid, d.item_id, len(d.grades), d.final)
            for d in result.report.disagreements] == [("s1", "faq-cap", 2, 0),
                                                      ("s2", "frm-refund", 2, 1)]


@pytest.mark.parametrize("grades, merged", [([2], 2), ([0, 2], 1), ([1, 2], 1), ([2, 2, 0], 2),
                                            ([0, 1, 2, 2], 1), ([0, 0, 2], 0)])
def test_merge_is_the_median_rounded_down(grades, merged):
    assert merge_grades(grades) == merged


def test_base_qrels_keep_pairs_no_sheet_holds(world):
    out = world["dir"] / "sheet.csv"
    few = {q: world["qrels"][q] for q in ("s1", "s2")}
    export_sheet(few, world["queries"], world["catalogue"], out)
    fill_sheet(out, {("s1", "faq-cap"): "no"})
    q = import_sheets([out], world["catalogue"], base=world["qrels"]).qrels
    expected = {k: dict(v) for k, v in world["qrels"].items()}
    expected["s1"]["faq-cap"] = 0
    assert q == expected
    assert list(q) == list(world["qrels"])


def test_sheet_resaved_by_a_spreadsheet_program_reads_back(world):
    # What spreadsheet programs write: BOM, CRLF, every row padded to the widest row,
    # notes padded with empty cells, quotes only where needed, a grade re-saved as "2.0".
    out = world["dir"] / "sheet.csv"
    export_sheet(world["qrels"], world["queries"], world["catalogue"], out)
    records = list(csv.reader(io.StringIO(out.read_bytes().decode("utf-8-sig"), newline="")))
    width = len(COLUMNS)
    for r in records:
        r.extend([""] * (width - len(r)))
    header = records.index(list(COLUMNS))
    records[header + 1][COLUMNS.index("verdict")] = "2.0"
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\r\n").writerows(records)
    resaved = world["dir"] / "resaved.csv"
    resaved.write_bytes(b"\xef\xbb\xbf" + buf.getvalue().encode("utf-8"))
    assert resaved.read_bytes().count(b"\r\n") == len(records)
    result = import_sheets([resaved], world["catalogue"])
    assert result.qrels == world["qrels"]
    assert result.report.sheets[0].filled == 1


def test_importing_an_unfilled_sheet_warns_that_the_output_is_still_silver(world):
    out = world["dir"] / "sheet.csv"
    export_sheet(world["qrels"], world["queries"], world["catalogue"], out)
    res = invoke(["review", "import", out, "-c", world["cat"], "-o", world["dir"] / "r.qrels"])
    assert res.exit_code == 0, res.output
    assert "(0 of 10 sheet pairs reviewed, 10 left)" in res.stdout
    assert res.stderr.strip() == (
        f"warning: no sheet has a verdict yet, so {world['dir'] / 'r.qrels'} holds the "
        "silver grades unchanged: machine-made estimates, not reviewed judgments")
    fill_sheet(out, {("s1", "kb-fares"): "ok"})
    res = invoke(["review", "import", out, "-c", world["cat"], "-o", world["dir"] / "r.qrels"])
    assert res.exit_code == 0 and "warning" not in res.stderr


def test_half_filled_sheet_imports_what_is_filled_and_says_what_is_left(world):
    out = world["dir"] / "sheet.csv"
    export_sheet(world["qrels"], world["queries"], world["catalogue"], out)
    fill_sheet(out, {("s1", "kb-fares"): "no", ("s3", "faq-cap"): "ok"})
    res = invoke(["review", "import", out, "-c", world["cat"], "-o", world["dir"] / "r.qrels"])
    assert res.exit_code == 0, res.output
    lines = res.stdout.splitlines()
    assert lines[0] == f"{out}: 10 rows, 2 filled, 8 left"
    assert lines[1] == (f"wrote {world['dir'] / 'r.qrels'}: 10 judgments for 6 queries "
                        "(2 of 10 sheet pairs reviewed, 8 left)")
    table = [line.split() for line in lines]
    # Wilson 95% for 1 of 2 is [0.095, 0.905] (checked against statsmodels in tests/external)
    assert ["all", "1", "2", "0.500", "[0.095,", "0.905]"] in table
    assert ["type", "article", "0", "1", "0.000", "[0.000,", "0.793]"] in table
    assert read_qrels(world["dir"] / "r.qrels")["s1"] == {"kb-fares": 0, "faq-cap": 1}


# --- CLI ------------------------------------------------------------------------------------

def test_cli_export_and_import_round_trip_with_provenance_found_beside_qrels(world):
    d = world["dir"]
    res = invoke(["review", "export", d / "silver.qrels", d / "silver.queries.tsv", "-c", world["cat"],
                  "-o", d / "r.csv", "--runs", d / "alpha.run", "--depth", "1"])
    assert res.exit_code == 0, res.output
    assert res.stdout.splitlines() == [
        f"wrote {d / 'r.csv'}: 15 rows (10 silver, 5 pooled) for 6 queries",
        "queries per destination type: article 1, faq 2, form 2, screen 1",
        f"query styles from {d / 'silver.jsonl'}",
        "scrubbed from query text: 1 phone",
    ]
    assert {r["style"] for r in sheet_rows(d / "r.csv")} == {"question", "keyword", "typo"}
    res = invoke(["review", "import", d / "r.csv", "-c", world["cat"], "-o", d / "back.qrels",
                  "--json"])
    assert res.exit_code == 0, res.output
    js = json.loads(res.stdout)
    assert js["pairs"] == 15 and js["left"] == 15
    assert js["silver_precision"] == {"successes": 0, "n": 0, "value": None, "low": None,
                                      "high": None}
    assert (d / "back.qrels").read_bytes() == (d / "silver.qrels").read_bytes()


def test_cli_rejects_conflicting_flags_before_work(world):
    d = world["dir"]
    res = invoke(["review", "export", d / "silver.qrels", d / "silver.queries.tsv", "-c", world["cat"],
                  "-o", d / "r.csv", "--runs", d / "alpha.run", "--pairs", "silver"])
    assert res.exit_code == 2
    assert res.stderr == "error: --runs has no effect with --pairs silver; drop one of them\n"
    res = invoke(["review", "export", d / "silver.qrels", d / "silver.queries.tsv", "-c", world["cat"],
                  "-o", d / "r.txt"])
    assert res.exit_code == 2 and "must end in .csv" in res.stderr
    assert not (d / "r.csv").exists()


def test_cli_import_lists_reviewer_agreement(world):
    d = world["dir"]
    export_sheet(world["qrels"], world["queries"], world["catalogue"], d / "p.csv",
                 reviewers=2, overlap=1.0)
    fill_sheet(d / "p-1.csv", {("s1", "kb-fares"): "2", ("s2", "frm-refund"): "2",
                          ("s3", "faq-cap"): "0"})
    fill_sheet(d / "p-2.csv", {("s1", "kb-fares"): "2", ("s2", "frm-refund"): "no",
                          ("s3", "faq-cap"): "0"})
    res = invoke(["review", "import", d / "p-1.csv", d / "p-2.csv", "-c", world["cat"],
                  "-o", d / "m.qrels"])
    assert res.exit_code == 0, res.output
    k = cohen_kappa([2, 2, 0], [2, 0, 0], labels=[0, 1, 2])
    kl = cohen_kappa([2, 2, 0], [2, 0, 0], "linear", labels=[0, 1, 2])
    assert (f"reviewers {d / 'p-1.csv'} and {d / 'p-2.csv'}: 3 shared rows, Cohen's kappa "
            f"{k:.3f}, grade-weighted (linear) {kl:.3f}") in res.stdout
    assert "1 disagreement(s) (grades per sheet -> merged):" in res.stdout
    assert (f"  s2 frm-refund: 'refund late bus' / '+Request a refund': {d / 'p-1.csv'} 2, "
            f"{d / 'p-2.csv'} 0 -> 1") in res.stdout

