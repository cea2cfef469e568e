"""Scores of runs read into columns equal ir_measures (trec_eval's C code underneath).

The columnar reader (trawl.columns) regroups and re-sorts lines itself and scoring looks
grades up from the columns, so both are checked against the reference on files written
in a scrambled order with ties, queries missing from either side and whitespace
variants, and on BM25 runs over the Cranfield collection (human judgments).
"""

from __future__ import annotations

import random

import numpy as np
import pytest

from trawl.columns import RankedColumns
from trawl.metrics import parse_metrics, score_matrix
from trawl.runs import Run, read_run

from .test_metrics_reference import assert_matches_reference, cranfield_runs, random_case  # noqa: F401

ALL = parse_metrics(["ndcg@10", "ndcg", "mrr@10", "recall@100", "precision@5", "map",
                     "hit@1"])


def write_scrambled(path, run: Run, seed: int) -> None:
    """The run's lines in random order (queries interleaved), some with tabs or doubled
    spaces, scores written with repr so they read back exactly."""
    rng = random.Random(seed)
    lines = [(qid, item, score) for qid, pairs in run.results.items() for item, score in pairs]
    rng.shuffle(lines)
    seps = [" ", " ", " ", "\t", "  "]
    path.write_text("".join(f"{q}{rng.choice(seps)}Q0 {i} {n} {s!r} tag\n"
                            for n, (q, i, s) in enumerate(lines, start=1)))


@pytest.mark.parametrize("seed", range(5))
def test_columns_read_from_scrambled_files_score_as_ir_measures(tmp_path, seed):
    qrels, run = random_case(seed)
    path = tmp_path / "r.run"
    write_scrambled(path, run, seed)
    back = read_run(path)
    assert isinstance(back.results, RankedColumns)  # the columnar path was taken
    assert back.results == run.results  # regrouped and put in trec_eval order
    assert_matches_reference(qrels, back)
    assert np.array_equal(score_matrix(qrels, back, ALL), score_matrix(qrels, run, ALL))


@pytest.mark.parametrize("which", [1, 2])
def test_columns_of_cranfield_bm25_runs_score_as_ir_measures(tmp_path, cranfield_runs, which):
    qrels, run = cranfield_runs[0], cranfield_runs[which]  # exact scores, then many ties
    path = tmp_path / "bm25.run"
    write_scrambled(path, run, which)
    back = read_run(path)
    assert isinstance(back.results, RankedColumns)
    assert_matches_reference(qrels, back)
