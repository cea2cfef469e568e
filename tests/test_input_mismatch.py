"""Inputs that do not belong together stop with exit 2 and name both files; a deliberate
partial overlap is allowed with --partial-overlap; runs can be named from the command line."""

from __future__ import annotations

import json

import pytest

from .conftest import invoke

ITEMS = [{"id": f"it{i}", "type": "faq" if i % 2 else "form", "title": f"Item {i}",
          "text": f"About passes and fares number {i}."} for i in range(10)]


def run_lines(qids, items, tag="sys") -> str:
    return "".join(f"{q} Q0 {it} {r + 1} {10 - r} {tag}\n" for q in qids
                   for r, it in enumerate(items))


@pytest.fixture
def files(tmp_path):
    (tmp_path / "cat.jsonl").write_text("".join(json.dumps(r) + "\n" for r in ITEMS))
    qids = [f"q{i}" for i in range(10)]
    (tmp_path / "j.qrels").write_text("".join(f"q{i} 0 it{i} 2\n" for i in range(10)))
    (tmp_path / "good.run").write_text(run_lines(qids, ["it0", "it1", "it2"]))
    (tmp_path / "other.run").write_text(run_lines(["x1", "x2"], ["it0", "it1"]))
    (tmp_path / "few.run").write_text(run_lines(qids[:3], ["it0", "it1"]))
    (tmp_path / "foreign.run").write_text(run_lines(qids, ["zz1", "zz2", "it3"]))
    (tmp_path / "twin.run").write_text(run_lines(qids, ["it2", "it1", "it0"]))
    return tmp_path


@pytest.mark.parametrize("command", [
    ["score", "{d}/j.qrels", "{d}/other.run"],
    ["compare", "{d}/j.qrels", "{d}/good.run", "{d}/other.run", "--resamples", "10"],
    ["misses", "{d}/j.qrels", "{d}/other.run", "-c", "{d}/cat.jsonl"],
])
def test_run_sharing_no_query_is_refused_naming_both_files(files, command):
    args = [a.format(d=files) for a in command]
    for extra in ([], ["--partial-overlap"]):  # nothing to score either way
        res = invoke([*args, *extra])
        assert res.exit_code == 2
        assert res.stderr.startswith(f"error: {files}/other.run and {files}/j.qrels share no "
                                     "query: the run answers 2 queries (x1, x2), the qrels "
                                     "judge 10 queries (q0, q1, q2")
        assert res.stderr.count("\n") == 1


@pytest.mark.parametrize("command", [["score"], ["compare", "{d}/good.run"]])
def test_run_without_results_is_refused_saying_so(files, command):
    # an empty run file is a run in which nothing was found (bm25 writes one when no
    # query shares a word with the catalogue); the message used to show an empty '()'
    (files / "none.run").write_text("")
    args = [command[0], str(files / "j.qrels"), *(a.format(d=files) for a in command[1:]),
            str(files / "none.run")]
    for extra in ([], ["--partial-overlap"]):
        res = invoke([*args, *extra])
        assert res.exit_code == 2
        assert res.stderr == (f"error: {files}/none.run holds no results: nothing was found "
                              f"for any query, so there is nothing to score against the 10 "
                              f"queries judged in {files}/j.qrels; check the run was made "
                              "from these queries and their catalogue\n")


def test_run_answering_under_half_needs_the_flag(files):
    res = invoke(["score", files / "j.qrels", files / "few.run"])
    assert res.exit_code == 2
    assert (f"error: {files}/few.run answers 3 of the 10 queries judged in {files}/j.qrels "
            "(30%); the others would score 0. If the partial overlap is deliberate, allow it"
            ) == res.stderr.strip()
    ok = invoke(["score", files / "j.qrels", files / "few.run", "--partial-overlap"])
    assert ok.exit_code == 0 and "queries without results, scored 0: 7 of 10" in ok.output


def test_run_from_another_catalogue_needs_the_flag(files):
    args = ["score", files / "j.qrels", files / "foreign.run", "-c", files / "cat.jsonl"]
    res = invoke(args)
    assert res.exit_code == 2
    assert (f"{files}/foreign.run: 2 of its 3 distinct items (67%) are not in "
            f"{files}/cat.jsonl, e.g. zz1, zz2; was the run made from another catalogue?"
            ) in res.stderr
    assert invoke([*args, "--partial-overlap"]).exit_code == 0
    assert invoke(args[:3]).exit_code == 0  # without a catalogue there is nothing to check


def test_agree_refuses_runs_that_share_no_query_with_one_set(files):
    (files / "b.qrels").write_text("".join(f"b{i} 0 it{i} 2\n" for i in range(10)))
    res = invoke(["agree", files / "j.qrels", files / "b.qrels", files / "good.run",
                  files / "twin.run", "--resamples", "0"])
    assert res.exit_code == 2
    assert res.stderr.startswith(f"error: {files}/good.run and {files}/b.qrels share no query")


def test_runs_with_one_tag_are_named_from_the_command_line(files):
    res = invoke(["score", files / "j.qrels", files / "good.run", files / "twin.run",
                  "--name", "dense", "--name", "hybrid", "--json"])
    assert res.exit_code == 0, res.stderr
    assert json.loads(res.stdout)["runs"] == ["dense", "hybrid"]
    res = invoke(["compare", files / "j.qrels", files / "good.run", files / "twin.run",
                  "--name", "dense", "--name", "hybrid", "--resamples", "10", "--json"])
    assert res.exit_code == 0, res.stderr
    assert {r["run"] for r in json.loads(res.stdout)["rows"]} == {"hybrid"}
    res = invoke(["agree", files / "j.qrels", files / "j.qrels", files / "good.run",
                  files / "twin.run", "--name", "dense", "--name", "hybrid", "--json",
                  "--resamples", "0"])
    assert res.exit_code == 0, res.stderr
    assert "dense" in res.stdout and "hybrid" in res.stdout


@pytest.mark.parametrize("names, message", [
    (["only-one"], "1 run name(s) given for 2 run file(s)"),
    (["same", "same"], "run name 'same' is given twice"),
])
def test_wrong_names_are_refused(files, names, message):
    res = invoke(["score", files / "j.qrels", files / "good.run", files / "twin.run",
                  *[a for n in names for a in ("--name", n)]])
    assert res.exit_code == 2 and message in res.stderr
