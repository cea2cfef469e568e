"""Small output defects a newcomer sees first: counts in words, whole bytes, named columns."""

from __future__ import annotations

import json

import pytest

from .conftest import invoke

ITEMS = [{"id": f"it{i}", "type": "faq", "title": f"Fares and passes {i}",
          "text": f"Zone {i} day passes, refunds and lost cards."} for i in range(12)]


@pytest.fixture
def bm25_index(tmp_path):
    (tmp_path / "cat.jsonl").write_text("".join(json.dumps(r) + "\n" for r in ITEMS))
    (tmp_path / "one.tsv").write_text("q1\tday passes\n")
    res = invoke(["index", tmp_path / "cat.jsonl", "-e", "bm25", "-o", tmp_path / "idx", "-q"])
    assert res.exit_code == 0, res.stderr
    return tmp_path


def test_search_says_1_query_and_whole_bytes_per_item(bm25_index):
    d = bm25_index
    res = invoke(["search", d / "idx", d / "one.tsv", "-o", d / "r.run", "--results", "3",
                  "--threads", "1", "-q"])
    assert res.exit_code == 0, res.stderr
    lines = res.stdout.splitlines()
    assert "(1 query, top 3)" in lines[3] and "(1 query timed one at a time" in lines[3]
    assert "; 1 thread on " in lines[3]
    per_item = lines[2].split()[-1]
    assert per_item.isdigit(), per_item  # was e.g. 481.475


def test_compare_long_names_every_column(bm25_index):
    d = bm25_index
    (d / "q.tsv").write_text("".join(f"q{i}\tzone {i} passes\n" for i in range(12)))
    (d / "j.qrels").write_text("".join(f"q{i} 0 it{i} 2\n" for i in range(12)))
    for name, results in (("a", "12"), ("b", "2")):
        assert invoke(["search", d / "idx", d / "q.tsv", "-o", d / f"{name}.run", "--results",
                       results, "-q"]).exit_code == 0
    res = invoke(["compare", d / "j.qrels", d / "a.run", d / "b.run", "--long", "-m", "ndcg@10",
                  "--resamples", "200"])
    assert res.exit_code == 0, res.stderr
    lines = res.stdout.splitlines()
    at = next(i for i, line in enumerate(lines) if "p Holm" in line)  # after the decision block
    header, rule = lines[at:at + 2]
    assert header.split()[-1] == "mark"
    assert len(header.split("  ")) > 1 and all(c in "- " for c in rule)
    assert len([w for w in header.split() if w]) >= len(rule.split())  # no dash under a blank


def test_progress_bars_stay_out_of_piped_output(bm25_index):
    """click's runner is no terminal: stderr holds no bar and no carriage return."""
    d = bm25_index
    res = invoke(["search", d / "idx", d / "one.tsv", "-o", d / "r.run", "--results", "3"])
    assert res.exit_code == 0 and "\r" not in res.stderr and "searching" not in res.stderr
