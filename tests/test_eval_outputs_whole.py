"""An evaluation reuses only outputs that are what it wrote, and publishes its outputs
as a whole.

Before, a truncated run file whose inputs were unchanged was reused ("reusing", nDCG
from the truncated file, no warning), and an evaluation stopped while rewriting a
folder left new tables beside the old results.json and report.html.
"""

from __future__ import annotations

import json

import pytest

from trawl.pipeline.evaluation import evaluate
from trawl.pipeline.publish import STAMP, file_stamp
from trawl.pipeline.sets import JudgmentSet

from .test_pipeline import write_library

ENCODERS = ["bm25", "strict=bm25;k1=0.9;b=0.4"]


def run_eval(library, out, notes: list[str] | None = None, qrels=None):
    cat, queries, default_qrels = library
    return evaluate(cat, [JudgmentSet("gold", queries, qrels or default_qrels)], ENCODERS, out,
                    cache_dir=out.parent / "cache", resamples=200, quiet=True,
                    notify=(notes.append if notes is not None else None))


def primary_means(result) -> dict[str, float]:
    ev = result.bundle["evaluations"][0]
    return {s["run"]: s["mean"] for s in ev["scores"]
            if s["type"] is None and s["metric"] == "ndcg@10"}


@pytest.fixture
def library(tmp_path):
    return write_library(tmp_path / "lib")


def test_a_truncated_run_is_searched_again_with_a_note(library, tmp_path):
    out = tmp_path / "out"
    first = primary_means(run_eval(library, out))
    run_file = out / "gold" / "runs" / "bm25.run"
    lines = run_file.read_text().splitlines(keepends=True)
    run_file.write_text("".join(lines[: len(lines) // 3]))  # cut short, inputs unchanged
    notes: list[str] = []
    again = primary_means(run_eval(library, out, notes))
    assert again == first
    assert any(n.startswith(f"search gold: bm25: {run_file} is not the file the last "
                            "evaluation wrote") and n.endswith("searching again")
               for n in notes), notes
    assert not any("bm25: reusing" in n for n in notes)
    assert any("strict: reusing" in n for n in notes)  # an intact run is still reused
    sidecar = json.loads((out / "gold" / "runs" / "bm25.run.latency.json").read_text())
    assert sidecar["run_file"] == file_stamp(run_file)


def test_a_stopped_evaluation_leaves_the_previous_outputs_whole(library, tmp_path,
                                                                monkeypatch):
    out = tmp_path / "out"
    run_eval(library, out)
    before = {p: p.read_bytes() for p in out.rglob("*")
              if p.is_file() and p.suffix in (".json", ".csv", ".html")
              and "runs" not in p.parts and "indexes" not in p.parts}
    assert out / "results.json" in before and out / "gold" / "scores.csv" in before
    other = tmp_path / "other.qrels"  # other judgments: every table would change
    other.write_text("".join(ln.replace(" 2\n", " 1\n")
                             for ln in library[2].read_text().splitlines(keepends=True)))

    def stop(*_a, **_k):
        raise KeyboardInterrupt  # stopped after the tables were written, before the report

    monkeypatch.setattr("trawl.report.html.render_html", stop)
    with pytest.raises(KeyboardInterrupt):
        run_eval(library, out, qrels=other)
    after = {p: p.read_bytes() for p in before}
    assert after == before
    assert not list(out.glob(".staging-*"))
    listed = json.loads((out / STAMP).read_text())["files"]
    for rel, stamp in listed.items():
        assert file_stamp(out / rel) == stamp, rel
    assert {"results.json", "report.html", "gold/scores.csv"} <= set(listed)


def test_outputs_of_judgment_sets_no_longer_evaluated_are_removed(library, tmp_path):
    cat, queries, qrels = library
    out = tmp_path / "out"
    evaluate(cat, [JudgmentSet("gold", queries, qrels), JudgmentSet("again", queries, qrels)],
             ["bm25"], out, cache_dir=tmp_path / "cache", resamples=200, quiet=True)
    assert (out / "again" / "scores.csv").is_file()
    evaluate(cat, [JudgmentSet("gold", queries, qrels)], ["bm25"], out,
             cache_dir=tmp_path / "cache", resamples=200, quiet=True)
    assert not (out / "again" / "scores.csv").exists()  # no table of an old set is left
    assert "again/scores.csv" not in json.loads((out / STAMP).read_text())["files"]
