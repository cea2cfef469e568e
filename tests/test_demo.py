"""`trawl demo` on a reduced setting: the whole job on the bundled transit catalogue."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from trawl import pipeline
from trawl.pipeline import demo_job
from trawl.errors import TrawlError

from .conftest import DEMO_CATALOGUE, GOLD_QRELS, GOLD_QUERIES, invoke

needs_data = pytest.mark.skipif(
    not all(p.is_file() for p in (DEMO_CATALOGUE, GOLD_QUERIES, GOLD_QRELS)),
    reason="demo data (corpora/quillfern.jsonl, qrels/quillfern-gold.*) not in this checkout")


@needs_data
@pytest.mark.slow
def test_demo_reduced_runs_the_whole_job(tmp_path):
    # Reduced: two lexical systems and their fusion, queries from 80 items; the full
    # demo (dense encoders, distillation) is measured in the README, not here.
    out = tmp_path / "demo"
    result = invoke(["demo", "-o", out, "-e", "bm25", "-e", "strict=bm25;k1=0.9;b=0.4",
                     "--fuse", "bm25+strict", "--sample", "80", "--resamples", "300",
                     "--json"])
    assert result.exit_code == 0, result.output
    bundle = json.loads(result.stdout)
    assert [(e["name"], e["silver"]) for e in bundle["evaluations"]] == [
        ("silver", True), ("gold", False)]
    gold_queries = sum(1 for line in GOLD_QUERIES.read_text(encoding="utf-8").splitlines()
                       if line.strip())
    assert bundle["evaluations"][1]["queries"] == gold_queries
    silver_files = [out / "silver" / f"quillfern-silver.{ext}"
                    for ext in ("queries.tsv", "qrels", "jsonl")]
    assert all(p.is_file() for p in silver_files)
    silver_queries = len(silver_files[0].read_text(encoding="utf-8").splitlines())
    assert bundle["evaluations"][0]["queries"] == silver_queries
    ag = bundle["agreement"]
    assert (ag["a"], ag["b"]) == ("silver", "gold")
    assert [s["run"] for s in ag["systems"]] == ["bm25", "strict", "bm25+strict"]
    assert -1 <= ag["tau"]["value"] <= 1
    page = (out / "report.html").read_text(encoding="utf-8")
    assert 'id="agreement"' in page and "Silver judgments are estimates." in page
    assert json.loads((out / "agreement.json").read_text())["kendall_tau_b"] == ag["tau"]
    # the demo's results.json fits the bundle's schema (reference: the jsonschema library)
    jsonschema = pytest.importorskip("jsonschema")
    jsonschema.validate(json.loads((out / "results.json").read_text(encoding="utf-8")),
                        pipeline.results_schema(), cls=jsonschema.Draft202012Validator)


@needs_data
def test_demo_finds_its_data_in_the_checkout():
    assert (demo_job.demo_data_root() / demo_job.DEMO_CATALOGUE) == DEMO_CATALOGUE


def test_missing_demo_data_is_a_clear_error(monkeypatch, tmp_path):
    monkeypatch.setattr(demo_job, "DEMO_CATALOGUE", tmp_path / "nowhere.jsonl")
    with pytest.raises(TrawlError, match=r"demo data not found: .*nowhere\.jsonl is missing; "
                                         r"the demo runs from a source checkout"):
        demo_job.demo_data_root()


def test_demo_rejects_unknown_fusion_before_any_work(tmp_path):
    out = tmp_path / "demo"
    result = invoke(["demo", "-o", out, "-e", "bm25", "--fuse", "bm25+minilm"])
    assert result.exit_code == 2
    assert "'minilm' is not one of the systems given with -e (bm25)" in result.stderr
    assert not out.exists()


@needs_data
def test_demo_time_covers_synthesis_not_only_the_evaluation(monkeypatch, tmp_path):
    """The printed 'in N s' is the whole demo: a demo that spent minutes distilling and
    synthesising printed only evaluate's share (96.6 s of a 334 s run)."""
    import time

    from trawl import silver, synth
    from trawl.pipeline.evaluation import EvalResult

    def slow_synthesise(*args, **kwargs):
        time.sleep(0.3)
        return type("Silver", (), {"queries": {}, "summary": {"items": 0}})()

    monkeypatch.setattr(synth, "synthesise", slow_synthesise)
    monkeypatch.setattr(silver, "write_silver", lambda prefix, s: [])
    monkeypatch.setattr(demo_job, "evaluate",
                        lambda *a, **k: EvalResult(tmp_path, tmp_path / "r.html", None, 0.01))
    result = demo_job.demo(tmp_path / "demo", encoders=("bm25",))
    assert result.seconds >= 0.3


@needs_data
@pytest.mark.parametrize("option, env, expected", [
    (None, None, "OUT/cache"), (None, "ENV", "ENV"), ("OPT", "ENV", "OPT")])
def test_demo_cache_is_the_option_else_the_environment_else_inside_its_output(
        monkeypatch, tmp_path, option, env, expected):
    from trawl import silver, synth
    from trawl.pipeline.evaluation import EvalResult

    seen = {}

    def fake_synthesise(cat, settings, cache_dir=None, quiet=False):
        seen["synth"] = cache_dir
        return type("Silver", (), {"queries": {}, "summary": {"items": 0}})()

    def fake_evaluate(*args, cache_dir=None, **kwargs):
        seen["eval"] = cache_dir
        return EvalResult(tmp_path, tmp_path / "r.html", None, 0.01)

    monkeypatch.setattr(synth, "synthesise", fake_synthesise)
    monkeypatch.setattr(silver, "write_silver", lambda prefix, s: [])
    monkeypatch.setattr(demo_job, "evaluate", fake_evaluate)
    monkeypatch.setattr("trawl.cli.evaluation._finish", lambda result, as_json: None)
    if env:
        monkeypatch.setenv("TRAWL_CACHE_DIR", str(tmp_path / env))
    else:
        monkeypatch.delenv("TRAWL_CACHE_DIR", raising=False)
    args = ["demo", "-o", tmp_path / "OUT", "-e", "bm25", "--quiet"]
    result = invoke(args + (["--cache-dir", tmp_path / option] if option else []))
    assert result.exit_code == 0, result.output
    want = tmp_path / expected
    assert Path(seen["synth"]) == want and Path(seen["eval"]) == want
