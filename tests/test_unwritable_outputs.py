"""Places trawl cannot write are one-line errors naming the path, exit 2, found before
the work where they can be, with nothing half-written.

These tests run as root in CI, where chmod does not stop writing, so they use paths
whose parent is a regular file (no user can create anything there), an embedding cache
file that is not a database, and a folder where the cache file should be. Before,
each of these ended in a FileExistsError, NotADirectoryError or sqlite3 traceback with
exit 1, and `search` failed only after searching.
"""

from __future__ import annotations

import os

import pytest

from trawl.errors import OutputError
from trawl.index import build_index

from .conftest import invoke
from .retrieval_fakes import FakeLoader, tiny_catalogue


@pytest.fixture
def files(tmp_path, monkeypatch):
    monkeypatch.setenv("TRAWL_CACHE_DIR", str(tmp_path / "cache"))
    (tmp_path / "cat.jsonl").write_text('{"id": "a", "type": "faq", "title": "Late fees"}\n'
                                        '{"id": "b", "type": "form", "title": "Lost card"}\n')
    (tmp_path / "q.tsv").write_text("q1\tlate fees\n")
    (tmp_path / "q.qrels").write_text("q1 0 a 1\n")
    (tmp_path / "afile").write_text("I am a file\n")
    return tmp_path


def one_error_line(result, path, says: str) -> None:
    assert result.exit_code == 2, result.output
    assert result.stderr.count("\n") == 1 and result.stderr.startswith("error: ")
    assert str(path) in result.stderr and says in result.stderr, result.stderr
    assert "Traceback" not in result.output


def test_index_under_a_file(files):
    out = files / "afile" / "idx"
    res = invoke(["index", files / "cat.jsonl", "-e", "bm25", "-o", out])
    one_error_line(res, out, "afile is a file, not a folder; choose a path that is not "
                             "inside a file")
    assert (files / "afile").read_text() == "I am a file\n"


def test_search_output_under_a_file_is_refused_before_searching(files, monkeypatch):
    assert invoke(["index", files / "cat.jsonl", "-e", "bm25", "-o", files / "idx"]
                  ).exit_code == 0

    def no_search(*_a, **_k):
        raise AssertionError("searched before checking the output")

    monkeypatch.setattr("trawl.latency.measure_search", no_search)
    out = files / "afile" / "r.run"
    res = invoke(["search", files / "idx", files / "q.tsv", "-o", out, "--results", "2"])
    one_error_line(res, out, "cannot write run file")


def test_score_per_query_table_under_a_file(files):
    assert invoke(["index", files / "cat.jsonl", "-e", "bm25", "-o", files / "idx"]
                  ).exit_code == 0
    assert invoke(["search", files / "idx", files / "q.tsv", "-o", files / "r.run",
                   "--results", "2"]).exit_code == 0
    out = files / "afile" / "pq.csv"
    res = invoke(["score", files / "q.qrels", files / "r.run", "--per-query", out])
    one_error_line(res, out, "cannot write per-query table")


def test_eval_output_under_a_file_is_refused_before_indexing(files):
    out = files / "afile" / "out"
    res = invoke(["eval", files / "cat.jsonl", files / "q.tsv", files / "q.qrels",
                  "-e", "bm25", "-o", out])
    one_error_line(res, out, "cannot write output folder")
    assert not (files / "cache").exists()


def test_cache_folder_under_a_file_is_refused_before_loading_a_model(files):
    cache = files / "afile" / "cache"
    res = invoke(["index", files / "cat.jsonl", "-e", "minilm", "-o", files / "idx",
                  "--cache-dir", cache])
    one_error_line(res, cache, "cannot write embedding cache folder")
    assert not (files / "idx").exists()


@pytest.mark.parametrize("make, says", [
    (lambda p: p.write_bytes(b"not a database at all\n" * 100), "file is not a database"),
    (lambda p: p.mkdir(), "unable to open database file"),
])
def test_unusable_embedding_cache_is_named_with_what_to_do(tmp_path, make, says):
    (tmp_path / "c").mkdir()
    make(tmp_path / "c" / "embeddings.sqlite")
    with pytest.raises(OutputError) as exc:
        build_index(tiny_catalogue(), "minilm", tmp_path / "idx", cache_dir=tmp_path / "c",
                    quiet=True, loader=FakeLoader())
    assert str(exc.value) == (f"embedding cache {tmp_path / 'c' / 'embeddings.sqlite'} cannot "
                              f"be used ({says}); delete that file or use another cache folder")
    assert not (tmp_path / "idx").exists()


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes through file permissions")
def test_read_only_output_folder(files):
    ro = files / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        res = invoke(["index", files / "cat.jsonl", "-e", "bm25", "-o", ro / "idx"])
        one_error_line(res, ro / "idx", "no permission to write in")
    finally:
        ro.chmod(0o755)
