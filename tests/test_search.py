"""The `index` and `search` commands end to end: run files, latency sidecar, refusals."""

from __future__ import annotations

import json

import numpy as np
import pytest

from trawl.latency import measure_search
from trawl.index import open_index
from trawl.runs import read_run

from .conftest import invoke
from .retrieval_fakes import FakeLoader, tiny_catalogue

CATALOGUE = "\n".join([
    '{"id": "renew", "type": "screen", "title": "Renew loans", "text": "Extend the due date of books you have borrowed."}',
    '{"id": "fees", "type": "article", "title": "Late fees", "text": "What a late return costs and how to pay it."}',
    '{"id": "card", "type": "form", "title": "Replace a lost library card", "text": "Block the old card and order a new one."}',
    '{"id": "blank-1", "type": "faq", "title": "", "text": ""}',
    '{"id": "blank-2", "type": "faq", "title": "", "text": ""}',
]) + "\n"
QUERIES = "q1\tlate fees for an overdue book\nq2\tlost my library card\nq3\tthe of and\n"


@pytest.fixture
def files(tmp_path, monkeypatch):
    monkeypatch.setenv("TRAWL_CACHE_DIR", str(tmp_path / "cache"))
    (tmp_path / "cat.jsonl").write_text(CATALOGUE)
    (tmp_path / "q.tsv").write_text(QUERIES)
    return tmp_path


def test_bm25_index_and_search_write_run_and_latency(files):
    result = invoke(["index", files / "cat.jsonl", "-e", "bm25", "-o", files / "idx", "-q"])
    assert result.exit_code == 0, result.stderr
    assert result.stdout.startswith("indexed 5 items with bm25 (inverted index), ")
    result = invoke(["search", files / "idx", files / "q.tsv", "-o", files / "runs" / "bm25.run",
                     "--results", "5", "-q"])
    assert result.exit_code == 0, result.stderr
    lines = (files / "runs" / "bm25.run").read_text().splitlines()
    # bm25 lists only the items sharing a word with the query (no zero-score padding):
    # one item each for q1 and q2, none for q3, a query of stop words
    assert len(lines) == 2 and all(ln.split()[5] == "bm25" for ln in lines)
    run = read_run(files / "runs" / "bm25.run")
    assert run.results["q1"][0][0] == "fees" and run.results["q2"][0][0] == "card"
    assert "q3" not in run.results
    latency = json.loads((files / "runs" / "bm25.run.latency.json").read_text())
    assert latency["queries_timed"] == 3 and latency["warmup"] == 5 and latency["k"] == 5
    assert latency["p50_ms"] <= latency["p95_ms"] <= latency["p99_ms"]
    assert latency["items"] == 5
    assert latency["bytes_per_item"] == pytest.approx(latency["index_bytes"] / 5, abs=1e-3)
    assert "warm-up queries excluded" in latency["method"]
    assert result.stdout.splitlines()[0].split() == ["encoder", "p50", "ms", "p95", "ms", "p99",
                                                     "ms", "batch", "q/s", "vectors", "index",
                                                     "bytes", "bytes/item"]


def test_search_json_output(files):
    invoke(["index", files / "cat.jsonl", "-e", "bm25;k1=1.2", "-o", files / "idx", "-q"])
    result = invoke(["search", files / "idx", files / "q.tsv", "-o", files / "r.run", "--results", "2",
                     "--warmup", "0", "--json", "-q"])
    out = json.loads(result.stdout)
    assert out["run"] == str(files / "r.run") and out["encoder"] == "bm25;k1=1.2"
    assert out["latency_file"] == str(files / "r.run.latency.json") and out["warmup"] == 0


def test_k_larger_than_the_catalogue_is_an_error_naming_both(files):
    invoke(["index", files / "cat.jsonl", "-e", "bm25", "-o", files / "idx", "-q"])
    result = invoke(["search", files / "idx", files / "q.tsv", "-o", files / "r.run", "--results", "6"])
    assert result.exit_code == 2
    assert result.stderr == (f"error: 6 results per query asked for, but index {files}/idx "
                             "holds 5 items; ask for at most 5\n")
    assert not (files / "r.run").exists()


def test_default_results_keep_a_smaller_catalogue_whole_as_the_help_says(files):
    # the default of 100 used to be refused on this 5-item catalogue
    invoke(["index", files / "cat.jsonl", "-e", "bm25", "-o", files / "idx", "-q"])
    result = invoke(["search", files / "idx", files / "q.tsv", "-o", files / "r.run",
                     "--warmup", "0", "--json", "-q"])
    assert result.exit_code == 0, result.stderr
    assert json.loads(result.stdout)["k"] == 5
    helptext = " ".join(invoke(["search", "--help"]).stdout.split())
    assert ("(default: 100, or every item when the catalogue holds fewer); more than the "
            "catalogue holds is an error naming its size.") in helptext


def test_search_refuses_an_index_whose_catalogue_changed(files):
    invoke(["index", files / "cat.jsonl", "-e", "bm25", "-o", files / "idx", "-q"])
    (files / "cat.jsonl").write_text(CATALOGUE.replace("Late fees", "Overdue fines"))
    result = invoke(["search", files / "idx", files / "q.tsv", "-o", files / "r.run"])
    assert result.exit_code == 2
    assert result.stderr.startswith(f"error: index {files / 'idx'} is stale: ")
    assert result.stderr.endswith(f"update it with `trawl index {files / 'cat.jsonl'} -e bm25 "
                                  f"-o {files / 'idx'}` (only changed items are re-embedded)\n")
    rebuilt = invoke(["index", files / "cat.jsonl", "-e", "bm25", "-o", files / "idx", "-q"])
    assert rebuilt.exit_code == 0
    assert invoke(["search", files / "idx", files / "q.tsv", "-o", files / "r.run", "--results", "5",
                   "-q"]).exit_code == 0


def test_search_warns_when_the_catalogue_is_gone(files):
    invoke(["index", files / "cat.jsonl", "-e", "bm25", "-o", files / "idx", "-q"])
    (files / "cat.jsonl").unlink()
    result = invoke(["search", files / "idx", files / "q.tsv", "-o", files / "r.run", "--results", "5",
                     "-q"])
    assert result.exit_code == 0
    assert result.stderr == (f"warning: {files / 'cat.jsonl'} (the catalogue this index was "
                             "built from) is gone; cannot check the index is current "
                             "(give --catalogue)\n")


def test_index_rejects_hnsw_options_without_hnsw(files):
    result = invoke(["index", files / "cat.jsonl", "-e", "minilm", "-o", files / "idx",
                     "--hnsw-m", "8"])
    assert result.exit_code == 2
    assert result.stderr == "error: --hnsw-m needs --ann hnsw (got --ann exact)\n"


def test_index_rejects_unknown_encoder_before_reading_anything(files):
    result = invoke(["index", files / "missing.jsonl", "-e", "e5-large", "-o", files / "idx"])
    assert result.exit_code == 2
    assert result.stderr.startswith("error: encoder 'e5-large': unknown encoder 'e5-large'; "
                                    "allowed forms: minilm, minilm-int8, minilm-onnx, "
                                    "minilm-onnx-int8, static:DIR")


@pytest.mark.slow
def test_minilm_index_json_and_search(files):
    result = invoke(["index", files / "cat.jsonl", "-e", "minilm", "-o", files / "idx",
                     "--json", "-q"])
    info = json.loads(result.stdout)
    assert (info["items"], info["dim"], info["embedded"], info["reused"]) == (5, 384, 5, 0)
    again = json.loads(invoke(["index", files / "cat.jsonl", "-e", "minilm", "-o", files / "idx",
                               "--json", "-q"]).stdout)
    assert (again["embedded"], again["reused"]) == (0, 5)
    result = invoke(["search", files / "idx", files / "q.tsv", "-o", files / "m.run", "--results", "3",
                     "-q"])
    assert result.exit_code == 0, result.stderr
    run = read_run(files / "m.run")
    assert run.name == "m"
    assert run.results["q1"][0][0] == "fees" and run.results["q2"][0][0] == "card"
    vectors = np.load(files / "idx" / "vectors.npy")
    # the two blank items have identical (empty) text, hence identical vectors
    np.testing.assert_array_equal(vectors[3], vectors[4])
    np.testing.assert_allclose(np.linalg.norm(vectors, axis=1), 1.0, atol=1e-5)


def test_measure_search_returns_the_batch_run(tmp_path):
    cat, loader = tiny_catalogue(), FakeLoader()
    from trawl.index import build_index

    build_index(cat, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c", quiet=True,
                loader=loader)
    index = open_index(tmp_path / "idx", cat, loader=loader)
    queries = {f"q{i}": f"question {i}" for i in range(12)}
    run, report = measure_search(index, queries, k=4, warmup=2, name="fake")
    assert run == index.search(queries, k=4, quiet=True, name="fake")
    assert (report.queries_timed, report.warmup, report.batch_queries, report.k) == (12, 2, 12, 4)
    assert report.index_bytes == sum(p.stat().st_size for p in (tmp_path / "idx").iterdir())
    assert report.threads >= 1
