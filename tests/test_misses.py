"""The per-destination-type miss table, hand-computed on the tiny collection."""

from __future__ import annotations

import csv
import json

import pytest

from trawl.catalogue import load_catalogue
from trawl.errors import UsageError
from trawl.judgments import read_qrels
from trawl.misses import NO_RESULTS, miss_table
from trawl.queries import read_queries
from trawl.runs import read_run

from .conftest import invoke
from .scoring_data import write_collection


@pytest.fixture
def files(tmp_path):
    return write_collection(tmp_path)


@pytest.fixture
def report(files):
    return miss_table(read_qrels(files["qrels"]), read_run(files["dense"]),
                      load_catalogue(files["catalogue"]), k=10, worst=5,
                      queries=read_queries(files["queries"]))


def test_rows_by_hand(report):
    # dense run (scoring_data.py): q1 art-fares (grade 1, relevant) first; q2 hit at 1;
    # q3 faq-pets at 2 behind an article; q4 only scr-topup; q5 nothing retrieved.
    rows = {r.type: r for r in report.rows}
    assert list(rows) == ["article", "faq", "form", "screen"]
    a, f, fo, s = rows["article"], rows["faq"], rows["form"], rows["screen"]
    assert (a.queries, a.hit_at_1, a.hit_at_k, a.misses, a.median_rank, a.lost) == (
        1, 1.0, 1.0, 0, 1.0, 0)
    assert (f.hit_at_1, f.hit_at_k, f.misses, f.median_rank, f.lost_to) == (
        0.0, 1.0, 0, 2.0, {"article": 1.0})
    assert (fo.hit_at_k, fo.misses, fo.median_rank, fo.not_found, fo.lost_to) == (
        0.0, 1, None, 1, {"screen": 1.0})
    # screen: q1 (first relevant at 1), q4 and q5 (none): ranks 1, inf, inf
    assert (s.queries, s.hit_at_1, s.misses, s.median_rank, s.not_found, s.lost) == (
        3, pytest.approx(1 / 3), 2, None, 2, 2)
    assert s.lost_to == {NO_RESULTS: 0.5, "screen": 0.5}


def test_headline_names_the_largest_cross_type_confusion(report):
    assert report.headline == ("faq queries lose to article items 100% of the time their "
                               "rank-1 item is wrong (1 of 1; run dense)")


def test_worst_queries_lowest_wanted_rank_first(report):
    # one definition of wanted for counts and lines: q1's relevant art-fares is first, so
    # q1 is a hit at 1 and not a worst query; q4 (form and screen) is listed once
    got = [(w.type, w.qid, w.rank, w.wanted.id, w.winner.id if w.winner else None)
           for w in report.worst]
    assert got == [("faq", "q3", 2, "faq-pets", "art-fares"),
                   ("form", "q4", None, "frm-lost", "scr-topup"),
                   ("screen", "q5", None, "scr-trips", None)]
    assert report.worst[0].query == "dogs on buses"
    assert report.worst[0].winner.title == "How fares work"


def test_a_hit_never_shows_its_wanted_item_below_the_cutoff(files):
    rep = miss_table(read_qrels(files["qrels"]), read_run(files["lexical"]),
                     load_catalogue(files["catalogue"]), k=1, worst=10)
    qids = [w.qid for w in rep.worst]
    assert len(qids) == len(set(qids))  # each query once
    assert all(w.rank is None or w.rank > 1 for w in rep.worst)
    # listed = the typed queries whose first relevant item is not at rank 1, by the run
    qrels, run = read_qrels(files["qrels"]), read_run(files["lexical"])
    missed = set()
    for q, judged in qrels.items():
        if max(judged.values()) < 1:
            continue
        ranked = [item for item, _ in run.results.get(q, ())]
        if not ranked or judged.get(ranked[0], 0) < 1:
            missed.add(q)
    assert set(qids) == missed


def test_worst_is_limited_per_type(files):
    rep = miss_table(read_qrels(files["qrels"]), read_run(files["dense"]),
                     load_catalogue(files["catalogue"]), worst=1)
    assert [(w.type, w.qid) for w in rep.worst] == [("faq", "q3"), ("form", "q4"),
                                                    ("screen", "q5")]
    assert rep.worst[0].query == ""


def test_k_changes_hits_and_misses(files):
    rep = miss_table(read_qrels(files["qrels"]), read_run(files["dense"]),
                     load_catalogue(files["catalogue"]), k=1)
    faq = next(r for r in rep.rows if r.type == "faq")
    assert (faq.hit_at_k, faq.misses) == (0.0, 1)
    with pytest.raises(UsageError, match="k=0 must be at least 1"):
        miss_table({}, read_run(files["dense"]), load_catalogue(files["catalogue"]), k=0)


def test_as_dict_shape(report):
    d = report.as_dict()
    json.dumps(d)
    assert d["run"] == "dense" and d["k"] == 10 and d["worst"]["depth"] == 2
    assert d["rows"][1] == {"type": "faq", "queries": 1, "hit_at_1": 0.0, "hit_at_k": 1.0,
                            "misses": 0, "median_rank": 2.0, "not_found": 0, "lost": 1,
                            "lost_to": {"article": 1.0}}
    q5 = d["worst"]["queries"][2]
    assert q5["qid"] == "q5" and q5["rank"] is None and q5["winner"] is None
    assert q5["wanted"] == {"id": "scr-trips", "type": "screen", "title": "My trips",
                            "snippet": "Your recent journeys."}


def test_misses_command(files, tmp_path):
    out = tmp_path / "rows.csv"
    res = invoke(["misses", files["qrels"], files["dense"], "-c", files["catalogue"],
                  "--queries", files["queries"], "--csv", out])
    assert res.exit_code == 0
    lines = res.stdout.splitlines()
    assert lines[0] == "run dense: misses by destination type of the wanted item (k=10)"
    assert lines[5].split() == ["form", "1", "0%", "0%", "1", "not", "found", "1"]
    assert "    q5 \"where are my past journeys\": wanted scr-trips ('My trips') not " \
           "retrieved" in lines
    assert "      first instead: nothing retrieved" in lines
    rows = list(csv.DictReader(out.open()))
    assert rows[3]["lost_to"] == f"{NO_RESULTS}=0.5 screen=0.5"
    js = invoke(["misses", files["qrels"], files["dense"], "-c", files["catalogue"], "--json",
                 "--cutoff", "1"])
    assert json.loads(js.stdout)["k"] == 1


def test_misses_command_needs_the_catalogue(files):
    res = invoke(["misses", files["qrels"], files["dense"]])
    assert res.exit_code == 2 and "--catalogue" in res.stderr


# --- scrubbing the query text shown ---------------------------------------------------------

# q3 is among the worst queries shown; q2 (hit at rank 1) is not. Shapes as in
# tests/test_privacy.py.
PERSONAL_QUERIES = {"q2": "train was late, refund to j.orrin@example.net",
                    "q3": "dogs on buses, write to mara.quillen@example.org or ring "
                          "+44 7700 900123"}


@pytest.fixture
def personal_queries(files):
    texts = read_queries(files["queries"]) | PERSONAL_QUERIES
    files["queries"].write_text("".join(f"{q}\t{t}\n" for q, t in texts.items()))
    return files


def test_query_text_is_scrubbed_on_request_and_counted(personal_queries):
    f = personal_queries
    args = (read_qrels(f["qrels"]), read_run(f["dense"]), load_catalogue(f["catalogue"]))
    texts = read_queries(f["queries"])
    rep = miss_table(*args, queries=texts, scrub_queries=True)
    assert rep.worst[0].qid == "q3"
    assert rep.worst[0].query == "dogs on buses, write to [email] or ring [phone]"
    # counts cover every query text given, as evaluate(scrub_queries=True) counts them
    assert rep.scrubbed == {"email": 2, "phone": 1, "postcode": 0, "number": 0}
    assert rep.as_dict()["scrubbed"] == rep.scrubbed
    assert texts["q3"] == PERSONAL_QUERIES["q3"]  # the caller's mapping is left alone
    raw = miss_table(*args, queries=texts)
    assert raw.worst[0].query == PERSONAL_QUERIES["q3"]
    assert raw.scrubbed is None and "scrubbed" not in raw.as_dict()


def test_misses_command_scrubs_query_text_by_default(personal_queries):
    f = personal_queries
    base = ["misses", f["qrels"], f["dense"], "-c", f["catalogue"], "--queries", f["queries"]]
    res = invoke(base)
    assert res.exit_code == 0, res.output
    assert ("    q3 \"dogs on buses, write to [email] or ring [phone]\": wanted faq-pets "
            "('Can I bring my dog?') at rank 2") in res.stdout.splitlines()
    assert "scrubbed from query text: 2 email, 1 phone" in res.stdout.splitlines()
    assert "mara.quillen@example.org" not in res.stdout and "7700" not in res.stdout
    js = invoke([*base, "--json"])
    assert js.exit_code == 0
    data = json.loads(js.stdout)
    assert data["scrubbed"] == {"email": 2, "phone": 1, "postcode": 0, "number": 0}
    assert data["worst"]["queries"][0]["query"] == "dogs on buses, write to [email] or ring [phone]"
    plain = invoke([*base, "--no-scrub"])
    assert plain.exit_code == 0
    assert f"    q3 \"{PERSONAL_QUERIES['q3']}\": wanted faq-pets ('Can I bring my dog?') " \
           "at rank 2" in plain.stdout.splitlines()
    assert "scrubbed" not in plain.stdout
    assert "scrubbed" not in json.loads(invoke([*base, "--json", "--no-scrub"]).stdout)


def test_misses_command_no_scrub_needs_queries(files, tmp_path):
    # rejected before any file is read: the qrels path does not exist
    res = invoke(["misses", tmp_path / "absent.qrels", files["dense"], "-c", files["catalogue"],
                  "--no-scrub"])
    assert res.exit_code == 2
    assert res.stderr == "error: --no-scrub applies to query text; it needs --queries\n"
