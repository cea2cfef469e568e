"""Timing: one loop for single and fused systems, under a chosen compute thread count
(applied while timing, restored after, recorded in the latency sidecar and the report,
refused below 1)."""

from __future__ import annotations

import json
import os
import statistics

import faiss
import pytest
import torch

from trawl.latency import measure_fused, measure_search, percentiles, time_queries, use_threads
from trawl.errors import UsageError
from trawl.index import build_index, open_index

from .conftest import invoke
from .retrieval_fakes import FakeLoader, tiny_catalogue
from .test_search import CATALOGUE, QUERIES

REFUSAL = ("error: threads=0 must be >= 1; give --threads 1 or more (default 1: one compute "
           "thread per query, as an app replica serves)\n")


def _counts() -> tuple[int, int]:
    return torch.get_num_threads(), faiss.omp_get_max_threads()


def _other(n: int) -> int:
    """A count different from ``n``, so a test sees the change."""
    return 1 if n != 1 else 2


def test_use_threads_sets_both_libraries_and_restores_them():
    before = _counts()
    n = _other(before[0])
    with use_threads(n) as in_force:
        assert in_force == n
        assert _counts() == (n, n)
    assert _counts() == before


def test_use_threads_restores_after_an_error():
    before = _counts()
    with pytest.raises(KeyError), use_threads(_other(before[0])):
        raise KeyError("boom")
    assert _counts() == before


def test_use_threads_none_keeps_the_defaults():
    before = _counts()
    with use_threads(None) as in_force:
        assert in_force == before[0]
        assert _counts() == before


@pytest.mark.parametrize("n", [0, -3])
def test_use_threads_refuses_fewer_than_one(n):
    with pytest.raises(UsageError, match=rf"^threads={n} must be >= 1; "):
        with use_threads(n):
            pass


def test_measure_search_times_every_query_under_the_count_and_records_it(tmp_path):
    cat, loader = tiny_catalogue(), FakeLoader()
    build_index(cat, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c", quiet=True,
                loader=loader)
    index = open_index(tmp_path / "idx", cat, loader=loader)
    seen = []
    search_one = index.search_one

    def spy(text, k):
        seen.append(_counts())
        return search_one(text, k)

    index.search_one = spy
    before = _counts()
    n = _other(before[0])
    _, report = measure_search(index, {f"q{i}": f"question {i}" for i in range(4)}, k=3,
                               warmup=2, threads=n)
    assert seen == [(n, n)] * 6  # 2 warm-up + 4 timed
    assert report.threads == n
    assert _counts() == before


def test_the_timing_loop_warms_up_in_turn_then_times_every_query_once():
    served = []
    ms = time_queries(lambda qid, text: served.append((qid, text)),
                      {"a": "x", "b": "y", "c": "z"}, warmup=4)
    assert served == [("a", "x"), ("b", "y"), ("c", "z"), ("a", "x"),  # warm-up, cycling
                      ("a", "x"), ("b", "y"), ("c", "z")]  # timed
    assert len(ms) == 3 and min(ms) >= 0
    with pytest.raises(UsageError, match="^no queries to time$"):
        time_queries(lambda qid, text: None, {}, warmup=1)


def test_percentiles_match_linear_interpolation():
    # Reference: Python's statistics.quantiles with method="inclusive" interpolates
    # linearly between order statistics, as numpy's default percentile does.
    ms = [3.1, 0.4, 9.9, 2.2, 5.0, 7.3, 1.8, 4.4, 0.9, 6.6, 8.1]
    cuts = statistics.quantiles(ms, n=100, method="inclusive")
    got = percentiles(ms)
    assert got["p50_ms"] == pytest.approx(round(cuts[49], 4))
    assert got["p95_ms"] == pytest.approx(round(cuts[94], 4))
    assert got["p99_ms"] == pytest.approx(round(cuts[98], 4))
    assert got["mean_ms"] == pytest.approx(round(statistics.fmean(ms), 4))


def _counting(search_one, calls: list):
    def spy(text, k):
        calls.append(k)
        return search_one(text, k)
    return spy


def test_a_fused_system_is_timed_by_the_same_loop_searching_every_part(tmp_path):
    cat, loader = tiny_catalogue(), FakeLoader()
    build_index(cat, "minilm", tmp_path / "dense", cache_dir=tmp_path / "c", quiet=True,
                loader=loader)
    build_index(cat, "bm25", tmp_path / "lexical", quiet=True)
    parts = [open_index(tmp_path / "dense", cat, loader=loader),
             open_index(tmp_path / "lexical", cat)]
    calls = {"dense": [], "lexical": []}
    for name, index in zip(calls, parts):
        index.search_one = _counting(index.search_one, calls[name])
    queries = {f"q{i}": f"late fees {i}" for i in range(4)}
    out = measure_fused(parts, ["dense", "lexical"], queries, k=3, name="dense+lexical",
                        warmup=2)
    assert calls == {"dense": [3] * 6, "lexical": [3] * 6}  # 2 warm-up + 4 timed, each part
    assert (out["queries_timed"], out["warmup"], out["k"]) == (4, 2, 3)
    assert out["p50_ms"] <= out["p95_ms"] <= out["p99_ms"]
    assert "search of each part (dense, lexical)" in out["method"]


@pytest.fixture
def files(tmp_path, monkeypatch):
    monkeypatch.setenv("TRAWL_CACHE_DIR", str(tmp_path / "cache"))
    (tmp_path / "cat.jsonl").write_text(CATALOGUE)
    (tmp_path / "q.tsv").write_text(QUERIES)
    assert invoke(["index", tmp_path / "cat.jsonl", "-e", "bm25", "-o", tmp_path / "idx",
                   "-q"]).exit_code == 0
    return tmp_path


def test_search_threads_is_recorded_and_restored(files):
    before = _counts()
    n = _other(before[0])
    result = invoke(["search", files / "idx", files / "q.tsv", "-o", files / "r.run",
                     "--results", "5", "--threads", n, "-q"])
    assert result.exit_code == 0, result.stderr
    assert json.loads((files / "r.run.latency.json").read_text())["threads"] == n
    assert f"; {n} thread{'' if n == 1 else 's'} on " in result.stdout
    assert _counts() == before


def test_search_without_threads_times_single_queries_with_one_thread(files):
    result = invoke(["search", files / "idx", files / "q.tsv", "-o", files / "r.run", "--results", "5",
                     "-q"])
    assert result.exit_code == 0, result.stderr
    latency = json.loads((files / "r.run.latency.json").read_text())
    assert latency["threads"] == 1
    assert latency["batch_threads"] == latency["cores"] == len(os.sched_getaffinity(0))
    assert len(latency["load_before"]) == len(latency["load_after"]) == 3
    assert latency["busy"] == (max(latency["load_before"][0], latency["load_after"][0])
                               > latency["cores"])


def test_search_threads_zero_is_a_one_line_error(files):
    result = invoke(["search", files / "idx", files / "q.tsv", "-o", files / "r.run",
                     "--threads", "0"])
    assert result.exit_code == 2
    assert result.stderr == REFUSAL
    assert not (files / "r.run").exists()


def _eval(files, out, *extra):
    qrels = files / "q.qrels"
    qrels.write_text("q1 0 fees 2\nq2 0 card 2\nq3 0 renew 1\n")
    return invoke(["eval", files / "cat.jsonl", files / "q.tsv", qrels, "-e", "a=bm25",
                   "-e", "b=bm25;k1=0.9", "--fuse", "a+b", "--results", "5", "-o", out,
                   "--resamples", "50", "-q", *extra])


def _sidecars(out) -> dict[str, dict]:
    return {n: json.loads((out / f"judgments/runs/{n}.run.latency.json").read_text())
            for n in ("a", "b", "a+b")}


def test_eval_threads_is_recorded_reported_and_part_of_the_reuse_key(files):
    before = _counts()
    n = _other(before[0])
    out = files / "out"
    assert _eval(files, out, "--threads", n).exit_code == 0
    first = _sidecars(out)
    assert {name: lat["threads"] for name, lat in first.items()} == dict.fromkeys(first, n)
    assert f", {n} thread(s)" in json.loads((out / "results.json").read_text()
                                            )["setup"]["notes"]["latency"]
    assert f", {n} thread(s)" in (out / "report.html").read_text(encoding="utf-8")
    assert _counts() == before
    # the same count reuses the timed runs; another count times them again
    assert _eval(files, out, "--threads", n).exit_code == 0
    assert _sidecars(out) == first
    assert _eval(files, out, "--threads", _other(n)).exit_code == 0
    assert {name: lat["threads"] for name, lat in _sidecars(out).items()} == \
        dict.fromkeys(first, _other(n))


def test_eval_and_demo_refuse_threads_zero_before_any_work(files):
    result = _eval(files, files / "out", "--threads", "0")
    assert (result.exit_code, result.stderr) == (2, REFUSAL)
    assert not (files / "out").exists()
    result = invoke(["demo", "-o", files / "demo", "--threads", "0", "-q"])
    assert (result.exit_code, result.stderr) == (2, REFUSAL)
    assert not (files / "demo").exists()
