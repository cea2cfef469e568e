"""What results.json and the report know, the terminal shows: eval prints its warnings
(judged items missing from the catalogue, queries only in a run), and tables print
"too few queries" where a sample is too small for an interval.

Before, `trawl eval` printed none of its warnings (they reached only results.json and
report.html), and one judged query gave "0.240 (0.240 to 0.240)".
"""

from __future__ import annotations

import json

import pytest

from .conftest import invoke


@pytest.fixture
def files(tmp_path, monkeypatch):
    monkeypatch.setenv("TRAWL_CACHE_DIR", str(tmp_path / "cache"))
    (tmp_path / "cat.jsonl").write_text('{"id": "a", "type": "faq", "title": "Late fees"}\n'
                                        '{"id": "b", "type": "form", "title": "Lost card"}\n')
    (tmp_path / "q.tsv").write_text("q1\tlate fees\nq2\tlost card\n")
    (tmp_path / "q.qrels").write_text("q1 0 a 1\nq1 0 ghost 1\n")  # q2 judged nowhere
    return tmp_path


def test_eval_prints_the_warnings_results_json_holds(files):
    res = invoke(["eval", files / "cat.jsonl", files / "q.tsv", files / "q.qrels",
                  "-e", "bm25", "-o", files / "out", "--results", "2", "-q"])
    assert res.exit_code == 0, res.output
    bundle = json.loads((files / "out" / "results.json").read_text())
    warnings = bundle["evaluations"][0]["warnings"]
    assert f"judged items not in the catalogue {files / 'cat.jsonl'}: 1: ghost" in warnings
    assert "run 'bm25': queries not in the qrels, ignored: 1: q2" in warnings
    for w in warnings:
        assert f"warning: {w}" in res.stdout
    assert "too few queries" in res.stdout.splitlines()[3]  # the bm25 row's interval cell


def test_score_shows_too_few_queries_instead_of_a_zero_width_interval(files):
    (files / "r.run").write_text("q1 Q0 a 1 2.0 r\nq1 Q0 b 2 1.0 r\n")
    res = invoke(["score", files / "q.qrels", files / "r.run", "-m", "mrr@10",
                  "--resamples", "1000"])
    assert res.exit_code == 0, res.output
    assert res.stdout.splitlines()[3].split() == ["r", "1.000", "(too", "few", "queries)"]
    assert "(1.000 to 1.000)" not in res.stdout


def test_eval_refuses_more_results_than_the_catalogue_holds_as_search_does(files):
    """eval capped --results 3 at this 2-item catalogue without a word, where `trawl
    search` refuses it; both now refuse, naming the size, before any work."""
    res = invoke(["eval", files / "cat.jsonl", files / "q.tsv", files / "q.qrels",
                  "-e", "bm25", "-o", files / "out", "--results", "3", "-q"])
    assert res.exit_code == 2
    assert res.stderr == (f"error: 3 results per query asked for, but catalogue "
                          f"{files / 'cat.jsonl'} holds 2 items; ask for at most 2\n")
    assert not (files / "out").exists()
    res = invoke(["eval", files / "cat.jsonl", files / "q.tsv", files / "q.qrels",
                  "-e", "bm25", "-o", files / "out", "-q"])  # the default: every item
    assert res.exit_code == 0, res.output
    assert json.loads((files / "out" / "results.json").read_text())["setup"]["depth"] == 2
