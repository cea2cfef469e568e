"""Ranking metrics as numpy kernels over a gains matrix, and per-query tables.

Conventions follow trec_eval so that our numbers can be checked against it:

- a run is ranked by score descending, ties by item id descending (``runs.rank_order``);
- an item is *relevant* when its grade is at least 1; nDCG uses the grade itself as the
  gain (negative grades count as 0), with the ``gain / log2(rank + 1)`` discount and the
  ideal ranking built from every judged item of the query;
- precision@k divides by k even when fewer than k items were retrieved; recall and MAP
  divide by the number of relevant items in the qrels, retrieved or not;
- the mean is taken over every query in the qrels: a query missing from the run scores 0
  (trec_eval's ``-c``), and so does a query whose judgments are all grade 0 or below
  (nothing can be found for it; callers warn). Run queries absent from the qrels are
  ignored.

All metrics are computed at once from one matrix of gains (queries x ranks), so scoring
thousands of queries costs a few array operations rather than a loop per query.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from itertools import repeat
from operator import itemgetter
from typing import TYPE_CHECKING

import numpy as np

from .columns import RankedColumns, judged_gains
from .errors import UsageError
from .runs import Run

if TYPE_CHECKING:  # pandas costs a second of start-up; only per_query() imports it
    import pandas as pd

DEFAULT_METRICS = ("ndcg@10", "mrr@10", "recall@10", "recall@100")

# kind -> (needs a cutoff, what it measures); the order is the order of the help text
KINDS = {
    "ndcg": (False, "normalised discounted cumulative gain (graded)"),
    "mrr": (False, "reciprocal rank of the first relevant item (0 beyond the cutoff)"),
    "recall": (True, "share of the relevant items found in the top k"),
    "precision": (True, "share of the top k that is relevant"),
    "map": (False, "average precision (mean over queries: MAP)"),
    "hit": (True, "1 if any relevant item is in the top k, else 0"),
}
# the usual short spellings (as ir_measures writes them: P@5, R@100, RR@10, AP, Success@10)
ALIASES = {"p": "precision", "prec": "precision", "r": "recall", "rr": "mrr", "ap": "map",
           "success": "hit"}
ALLOWED_FORMS = ("ndcg@K, mrr@K, recall@K, precision@K, hit@K, map, map@K, ndcg, mrr, in any "
                 "case, or P@K, R@K, RR@K, AP, Success@K")
_NAME = re.compile(r"^([a-z]+)(?:@([0-9]+))?$")


@dataclass(frozen=True)
class Metric:
    """A metric kind and its cutoff; ``k=None`` means the whole ranking."""

    kind: str
    k: int | None = None

    @property
    def name(self) -> str:
        return self.kind if self.k is None else f"{self.kind}@{self.k}"

    def __str__(self) -> str:
        return self.name


def parse_metric(name: str) -> Metric:
    """``"nDCG@10"``, ``"P@5"`` -> ``Metric("ndcg", 10)``, ``Metric("precision", 5)``;
    anything else is a UsageError naming the forms."""
    m = _NAME.match("".join(name.split()).lower())
    kind, k = (ALIASES.get(m.group(1), m.group(1)), m.group(2)) if m else (None, None)
    if kind not in KINDS:
        raise UsageError(f"unknown metric {name!r}; use one of {ALLOWED_FORMS} "
                         "(K a whole number >= 1, e.g. ndcg@10)")
    if k is None and KINDS[kind][0]:
        raise UsageError(f"metric {name!r} needs a cutoff, e.g. {kind}@10")
    if k is not None and int(k) < 1:
        raise UsageError(f"metric {name!r}: the cutoff must be >= 1, e.g. {kind}@10")
    return Metric(kind, None if k is None else int(k))


def parse_metrics(names: Iterable[str | Metric]) -> tuple[Metric, ...]:
    """Parse and de-duplicate (first occurrence wins); at least one metric is required."""
    out: list[Metric] = []
    for n in names:
        m = n if isinstance(n, Metric) else parse_metric(n)
        if m not in out:
            out.append(m)
    if not out:
        raise UsageError(f"no metrics given; use e.g. {', '.join(DEFAULT_METRICS)}")
    return tuple(out)


# --- the gains matrix ---------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class RankedGains:
    """What every metric needs, one row per qrels query.

    ``gains[q, r]`` is the grade of the item at rank r+1 (0 if unjudged, past the end of
    the ranking or negative), ``relevant[q]`` the number of items graded >= 1 in the
    qrels and ``ideal[q]`` the judged grades sorted best first (zero-padded).
    """

    gains: np.ndarray
    relevant: np.ndarray
    ideal: np.ndarray


def ranked_gains(qrels: Mapping[str, Mapping[str, int]], run: Run,
                 depth: int | None = None) -> RankedGains:
    """Look up the grade of every ranked item, keeping ``depth`` ranks (None: all)."""
    qids = list(qrels)
    if isinstance(run.results, RankedColumns):
        gains = _column_gains(qrels, qids, run.results, depth)
    else:
        gains = _tuple_gains(qrels, qids, run.results, depth)
    grades = [sorted((g for g in qrels[q].values() if g > 0), reverse=True) for q in qids]
    ideal = np.zeros((len(qids), max((len(g) for g in grades), default=0) or 1))
    for i, g in enumerate(grades):
        ideal[i, :len(g)] = g
    relevant = np.fromiter((len(g) for g in grades), dtype=np.float64, count=len(grades))
    return RankedGains(gains, relevant, ideal)


def _tuple_gains(qrels: Mapping[str, Mapping[str, int]], qids: list[str],
                 results: Mapping[str, Sequence[tuple[str, float]]],
                 depth: int | None) -> np.ndarray:
    rankings = [results.get(qid, ()) for qid in qids]
    longest = max(map(len, rankings), default=0)
    width = longest if depth is None else min(depth, longest)
    gains = np.zeros((len(qids), max(width, 1)), dtype=np.float64)
    for i, (qid, pairs) in enumerate(zip(qids, rankings)):
        if pairs:
            row = list(map(qrels[qid].get, map(itemgetter(0), pairs[:width]), repeat(0)))
            gains[i, :len(row)] = row
    np.maximum(gains, 0.0, out=gains)
    return gains


def _column_gains(qrels: Mapping[str, Mapping[str, int]], qids: list[str],
                  results: RankedColumns, depth: int | None) -> np.ndarray:
    """The same matrix from a run read into columns, without a tuple per line."""
    where = [results.position(q) for q in qids]
    lengths = np.diff(results.offsets)
    longest = max((int(lengths[w]) for w in where if w >= 0), default=0)
    return judged_gains(qrels, qids, results, longest if depth is None else min(depth, longest))


# --- kernels: each maps RankedGains and a cutoff to one score per query --------------------

def _discount(n: int) -> np.ndarray:
    return 1.0 / np.log2(np.arange(2, n + 2, dtype=np.float64))


def _top(a: np.ndarray, k: int | None) -> np.ndarray:
    return a if k is None else a[:, :k]


def _safe_div(num: np.ndarray, den: np.ndarray) -> np.ndarray:
    out = np.zeros_like(num, dtype=np.float64)
    np.divide(num, den, out=out, where=den > 0)
    return out


def dcg(rg: RankedGains, k: int | None) -> np.ndarray:
    """Discounted cumulative gain: sum of grade / log2(rank + 1) over the top k."""
    g = _top(rg.gains, k)
    return g @ _discount(g.shape[1])


def ideal_dcg(rg: RankedGains, k: int | None) -> np.ndarray:
    ideal = _top(rg.ideal, k)
    return ideal @ _discount(ideal.shape[1])


def ndcg(rg: RankedGains, k: int | None) -> np.ndarray:
    return _safe_div(dcg(rg, k), ideal_dcg(rg, k))


def mrr(rg: RankedGains, k: int | None) -> np.ndarray:
    rel = _top(rg.gains, k) > 0
    first = rel.argmax(axis=1)
    return np.where(rel.any(axis=1), 1.0 / (first + 1), 0.0)


def recall(rg: RankedGains, k: int | None) -> np.ndarray:
    return _safe_div((_top(rg.gains, k) > 0).sum(axis=1).astype(np.float64), rg.relevant)


def precision(rg: RankedGains, k: int | None) -> np.ndarray:
    return (_top(rg.gains, k) > 0).sum(axis=1) / float(k)  # type: ignore[arg-type]  # parse_metric requires k


def average_precision(rg: RankedGains, k: int | None) -> np.ndarray:
    rel = (_top(rg.gains, k) > 0).astype(np.float64)
    prec_at_hits = rel * np.cumsum(rel, axis=1) / np.arange(1, rel.shape[1] + 1)
    return _safe_div(prec_at_hits.sum(axis=1), rg.relevant)


def hit(rg: RankedGains, k: int | None) -> np.ndarray:
    return (_top(rg.gains, k) > 0).any(axis=1).astype(np.float64)


KERNELS = {"ndcg": ndcg, "mrr": mrr, "recall": recall, "precision": precision,
           "map": average_precision, "hit": hit}


def depth_needed(metrics: Sequence[Metric]) -> int | None:
    """Ranks the metrics look at; None when one of them reads the whole ranking."""
    if any(m.k is None for m in metrics):
        return None
    return max(m.k for m in metrics)  # type: ignore[type-var]


def score_matrix(qrels: Mapping[str, Mapping[str, int]], run: Run,
                 metrics: Sequence[Metric]) -> np.ndarray:
    """Scores as an array (qrels queries in qrels order x metrics), without pandas."""
    rg = ranked_gains(qrels, run, depth_needed(metrics))
    out = np.empty((rg.gains.shape[0], len(metrics)), dtype=np.float64)
    for j, m in enumerate(metrics):
        out[:, j] = KERNELS[m.kind](rg, m.k)
    return out


def per_query(qrels: Mapping[str, Mapping[str, int]], run: Run,
              metrics: Iterable[str | Metric]) -> pd.DataFrame:
    """One row per qrels query (qrels order), one float column per metric name."""
    import pandas as pd

    ms = parse_metrics(metrics)
    return pd.DataFrame(score_matrix(qrels, run, ms), index=pd.Index(list(qrels), name="qid"),
                        columns=[m.name for m in ms])
