"""Silver figures for a lexical system that stems words (or a fusion holding one) carry a
caution: bench/silver_agreement.py --lexical "bm25;stem=english" measured silver putting
such a system above where people put it on every judged collection
(bench/results/2026-12-03-silver-stemming.md)."""

from __future__ import annotations

import json

import pytest

from trawl.pipeline.systems import plan_systems, stemming

from .conftest import invoke

ROWS = [{"id": f"it{i}", "type": "faq" if i % 2 else "form", "title": f"Fare rule {i}",
         "text": f"Zone {i} passes, refunds and day tickets."} for i in range(8)]


def test_stemming_names_stemmed_lexical_systems_and_the_fusions_holding_them():
    systems = plan_systems(["bm25", "stem=bm25;stem=english", "minilm"],
                           ["minilm+stem", "bm25+minilm", "bm25+minilm+bm25;stem=english"],
                           check_paths=False)
    assert stemming(systems) == ["stem", "minilm+stem", "bm25+minilm+stem"]
    assert stemming(plan_systems(["bm25", "minilm"], ["bm25+minilm"], check_paths=False)) == []


@pytest.mark.parametrize("judged_by, cautioned", [("silver", True), ("human", False)])
def test_caution_beside_silver_figures_only(tmp_path, judged_by, cautioned):
    (tmp_path / "c.jsonl").write_text("".join(json.dumps(r) + "\n" for r in ROWS))
    (tmp_path / "q.tsv").write_text("".join(f"q{i}\tzone {i} passes\n" for i in range(8)))
    (tmp_path / "j.qrels").write_text("".join(f"q{i} 0 it{i} 2\n" for i in range(8)))
    res = invoke(["eval", tmp_path / "c.jsonl", tmp_path / "q.tsv", tmp_path / "j.qrels",
                  "-e", "bm25", "-e", "stem=bm25;stem=english", "--fuse", "bm25+stem",
                  "--judgments", judged_by, "--resamples", "50", "-q", "-o", tmp_path / "out"])
    assert res.exit_code == 0, res.output
    bundle = json.loads((tmp_path / "out" / "results.json").read_text())
    said = [w for w in bundle["evaluations"][0]["warnings"]
            if "overrate lexical systems that stem" in w]
    assert len(said) == cautioned
    # the decision rests on this set too: its notes carry the caution beside the verdict
    noted = [n for n in bundle["decision"]["notes"] if "overrate lexical systems" in n]
    assert len(noted) == cautioned
    if cautioned:
        assert said[0].startswith("stem, bm25+stem: silver judgments overrate")
        assert "overrate lexical systems that stem" in res.stdout
        page = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
        assert "overrate lexical systems that stem" in page
