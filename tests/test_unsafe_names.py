"""Names that would break the files trawl writes are refused before any work, with a
one-line message that shows the name escaped and a safe alternative.

Before, `trawl search --name "my run"` searched, wrote a run whose tag field was two
words, and every later command refused the file trawl had just written.
"""

from __future__ import annotations

import pytest

from trawl.errors import UsageError
from trawl.fusion import reciprocal_rank_fusion
from trawl.index import build_index, open_index
from trawl.latency import measure_search
from trawl.runs import make_run, read_run, write_run

from .conftest import invoke
from .retrieval_fakes import tiny_catalogue

BAD_NAMES = {"my run": "my_run", "tab\there": "tab_here", "line\nbreak": "line_break",
             "zero\u200bwidth": "zero_width", "": "run", "nul\x00": "nul_"}


@pytest.mark.parametrize("name, fixed", BAD_NAMES.items())
def test_write_run_refuses_a_name_that_is_not_one_field(tmp_path, name, fixed):
    with pytest.raises(UsageError) as exc:
        write_run(tmp_path / "r.run", make_run(name, {"q1": [("d1", 1.0)]}))
    message = str(exc.value)
    assert message == (f"run name {name!r} cannot be the tag of a TREC run line, which must "
                       f"be one field without white space or control characters; use e.g. "
                       f"{fixed!r}")
    assert "\n" not in message and "\u200b" not in message  # shown escaped, on one line
    assert not (tmp_path / "r.run").exists()


def test_names_that_are_one_field_round_trip(tmp_path):
    for name in ("bm25", "minilm+bm25", "rrf-a+b", "ünïcode", "a.b_c-d"):
        write_run(tmp_path / "r.run", make_run(name, {"q1": [("d1", 1.0)]}))
        assert read_run(tmp_path / "r.run").name == name


def test_fusion_refuses_the_name_before_fusing():
    a = make_run("a", {"q1": [("d1", 1.0)]})
    with pytest.raises(UsageError, match="run name 'hy brid' cannot be the tag"):
        reciprocal_rank_fusion([a, a], name="hy brid")


def test_search_refuses_the_name_before_searching(tmp_path):
    cat = tiny_catalogue()
    build_index(cat, "bm25", tmp_path / "idx", cache_dir=tmp_path / "c", quiet=True)
    index = open_index(tmp_path / "idx", cat)
    calls = []
    index.search_one = lambda *a, **k: calls.append(a)  # no query may be timed
    with pytest.raises(UsageError, match="run name 'my run' cannot be the tag"):
        measure_search(index, {"q1": "late fees"}, k=5, name="my run")
    assert calls == []


def test_search_command_refuses_a_name_with_white_space(tmp_path, monkeypatch):
    monkeypatch.setenv("TRAWL_CACHE_DIR", str(tmp_path / "c"))
    (tmp_path / "cat.jsonl").write_text('{"id": "a", "type": "faq", "title": "Late fees"}\n')
    (tmp_path / "q.tsv").write_text("q1\tlate fees\n")
    assert invoke(["index", tmp_path / "cat.jsonl", "-e", "bm25", "-o", tmp_path / "idx",
                   "-q"]).exit_code == 0
    res = invoke(["search", tmp_path / "idx", tmp_path / "q.tsv", "-o", tmp_path / "r.run",
                  "--results", "1", "--name", "my run", "-q"])
    assert res.exit_code == 2
    assert res.stderr == ("error: run name 'my run' cannot be the tag of a TREC run line, "
                          "which must be one field without white space or control "
                          "characters; use e.g. 'my_run'\n")
    assert not (tmp_path / "r.run").exists()


def test_a_run_in_which_nothing_was_found_reads_back(tmp_path):
    # bm25 lists only matching items, so queries of stop words give an empty run file;
    # before, every command refused the file trawl had just written ("run is empty")
    from trawl.scores import score_runs

    write_run(tmp_path / "none.run", make_run("bm25", {"q1": []}))
    assert (tmp_path / "none.run").read_text() == ""
    run = read_run(tmp_path / "none.run")
    assert (run.name, dict(run.results)) == ("none", {})
    rep = score_runs({"q1": {"d1": 1}}, run, ["hit@1"])
    assert rep.values.tolist() == [[[0.0]]]
    assert "run 'none': queries without results, scored 0: 1 of 1: q1" in rep.warnings
