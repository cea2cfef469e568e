"""eval never calls judgments human unless told: without a synthesis provenance file and
without --judgments human they are of unknown origin, in results.json, the summary and
the report's badge."""

from __future__ import annotations

import json

import pytest

from .conftest import invoke

ROWS = [{"id": f"it{i}", "type": "faq" if i % 2 else "form", "title": f"Fare rule {i}",
         "text": f"Zone {i} passes, refunds and day tickets."} for i in range(8)]


@pytest.fixture
def inputs(tmp_path):
    (tmp_path / "c.jsonl").write_text("".join(json.dumps(r) + "\n" for r in ROWS))
    (tmp_path / "q.tsv").write_text("".join(f"q{i}\tzone {i} passes\n" for i in range(8)))
    (tmp_path / "j.qrels").write_text("".join(f"q{i} 0 it{i} 2\n" for i in range(8)))
    return tmp_path


def run_eval(d, out: str, *extra: str) -> dict:
    res = invoke(["eval", d / "c.jsonl", d / "q.tsv", d / "j.qrels", "-e", "bm25", "-e",
                  "loose=bm25;k1=0.9", "--resamples", "50", "-q", "-o", d / out, *extra])
    assert res.exit_code == 0, res.output
    bundle = json.loads((d / out / "results.json").read_text())
    return {"ev": bundle["evaluations"][0], "stdout": res.stdout,
            "page": (d / out / "report.html").read_text(encoding="utf-8")}


def test_qrels_without_provenance_are_of_unknown_origin(inputs):
    got = run_eval(inputs, "auto")
    ev = got["ev"]
    assert (ev["silver"], ev["origin"]) == (False, "unknown")
    assert ev["judged_by"].startswith("judgments of unknown origin")
    assert "human judgments" not in got["stdout"] and "unknown origin" in got["stdout"]
    assert 'class="badge unknown"' in got["page"] and 'class="badge human"' not in got["page"]


def test_human_when_the_user_says_so(inputs):
    got = run_eval(inputs, "human", "--judgments", "human")
    assert (got["ev"]["origin"], got["ev"]["judged_by"]) == ("human", "human judgments")
    assert 'class="badge human"' in got["page"]


def test_query_text_note_when_shown_as_given(inputs):
    assert "not scrubbed of personal data" in run_eval(inputs, "raw", "--no-scrub")["stdout"]
    assert "scrubbed from query text in the report: nothing found" in run_eval(
        inputs, "scrubbed")["stdout"]
