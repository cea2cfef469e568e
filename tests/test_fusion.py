"""Reciprocal Rank Fusion on a hand-computed example, and the `fuse` command."""

from __future__ import annotations

import pytest

from trawl.errors import UsageError
from trawl.fusion import reciprocal_rank_fusion
from trawl.runs import make_run, read_run, write_run

from .conftest import invoke

# Source of the formula: Cormack, Clarke & Buettcher (2009), "Reciprocal Rank Fusion
# outperforms Condorcet and individual Rank Learning Methods", SIGIR: RRFscore(d) =
# sum over rankings r of 1 / (k + r(d)), k = 60, ranks from 1.
A = make_run("dense", {"q1": [("d1", 0.9), ("d2", 0.8), ("d3", 0.7)],
                       "q2": [("x", 0.5), ("y", 0.4)]})
B = make_run("bm25", {"q1": [("d2", 12.0), ("d1", 11.0), ("d4", 3.0)],
                      "q2": [("y", 7.0), ("x", 6.0)]})
C = make_run("static", {"q1": [("d3", 0.6), ("d2", 0.5)]})


def test_three_runs_hand_computed():
    fused = reciprocal_rank_fusion([A, B, C])
    # d2: ranks 2, 1, 2 -> 1/62 + 1/61 + 1/62 = 0.048652
    # d1: ranks 1, 2, -  -> 1/61 + 1/62        = 0.032522
    # d3: ranks 3, -, 1  -> 1/63 + 1/61        = 0.032266
    # d4: ranks -, 3, -  -> 1/63               = 0.015873 (cut: fused list as long as the
    #                                              longest input, 3)
    assert [i for i, _ in fused.results["q1"]] == ["d2", "d1", "d3"]
    assert [s for _, s in fused.results["q1"]] == pytest.approx(
        [0.0486515, 0.0325225, 0.0322665], abs=1e-7)
    # q2 is missing from C; x and y both have ranks {1, 2}: an exact tie, broken by id
    # descending as trec_eval does
    assert fused.results["q2"] == (("y", 1 / 61 + 1 / 62), ("x", 1 / 61 + 1 / 62))
    assert fused.name == "rrf-dense+bm25+static"


def test_depth_limits_ranks_read_and_list_kept():
    fused = reciprocal_rank_fusion([A, B, C], depth=1, name="top1")
    # only first places count: d1, d2, d3 each get 1/61 and tie; highest id wins
    assert fused.results["q1"] == (("d3", 1 / 61),)
    assert fused.name == "top1"


def test_k_changes_the_weights():
    fused = reciprocal_rank_fusion([A, B], k=0)
    # k=0: d1 = 1/1 + 1/2 = 1.5, d2 = 1/2 + 1/1 = 1.5 (tie, d2 first), d3 = 1/3, d4 = 1/3
    assert fused.results["q1"] == (("d2", 1.5), ("d1", 1.5), ("d4", 1 / 3))


@pytest.mark.parametrize("runs, kw, message", [
    ([A], {}, "fusion needs at least 2 runs, got 1"),
    ([A, B], {"k": -1}, "RRF k=-1 must be >= 0"),
    ([A, B], {"depth": 0}, "depth=0 must be >= 1"),
])
def test_bad_arguments(runs, kw, message):
    with pytest.raises(UsageError, match=message):
        reciprocal_rank_fusion(runs, **kw)


def test_fuse_command_writes_the_fused_run(tmp_path):
    paths = []
    for run in (A, B, C):
        paths.append(tmp_path / f"{run.name}.run")
        write_run(paths[-1], run)
    result = invoke(["fuse", *paths, "-o", tmp_path / "hybrid.run", "--name", "hybrid"])
    assert result.exit_code == 0
    assert result.stdout == f"wrote {tmp_path / 'hybrid.run'}: hybrid, 2 queries\n"
    lines = (tmp_path / "hybrid.run").read_text().splitlines()
    assert [ln.split()[:4] + ln.split()[5:] for ln in lines] == [
        ["q1", "Q0", "d2", "1", "hybrid"], ["q1", "Q0", "d1", "2", "hybrid"],
        ["q1", "Q0", "d3", "3", "hybrid"], ["q2", "Q0", "y", "1", "hybrid"],
        ["q2", "Q0", "x", "2", "hybrid"]]
    assert read_run(tmp_path / "hybrid.run").results["q1"][0][1] == pytest.approx(0.0486515,
                                                                                  abs=1e-7)


def test_fuse_command_needs_two_runs(tmp_path):
    write_run(tmp_path / "a.run", A)
    result = invoke(["fuse", tmp_path / "a.run", "-o", tmp_path / "out.run"])
    assert result.exit_code == 2
    assert result.stderr == "error: fuse needs at least 2 runs, got 1\n"
    assert not (tmp_path / "out.run").exists()

