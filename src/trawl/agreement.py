"""How far to trust a judgment set: agreement statistics and system-ranking agreement.

Silver judgments are only useful if they rank systems the way people's judgments do.
``agree`` scores every run under two judgment sets and measures how alike the two system
rankings are (Kendall's tau-b, Spearman's rho) with a bootstrap interval over queries.
The kernels (Wilson interval, Cohen's kappa, tau-b, rho) are plain functions so review
reports and tests can use them directly.
"""

from __future__ import annotations

import math
from collections.abc import Hashable, Mapping, Sequence
from dataclasses import dataclass
from itertools import combinations
from statistics import NormalDist
from typing import Any

import numpy as np

from .errors import UsageError
from .runs import Run

Qrels = Mapping[str, Mapping[str, int]]


# --- proportions --------------------------------------------------------------------------

@dataclass(frozen=True)
class Proportion:
    """``successes`` out of ``n`` with a Wilson score interval; NaN bounds when n == 0."""

    successes: int
    n: int
    low: float
    high: float

    @property
    def value(self) -> float:
        return self.successes / self.n if self.n else math.nan

    def as_dict(self) -> dict[str, Any]:
        return {"successes": self.successes, "n": self.n, "value": _num(self.value),
                "low": _num(self.low), "high": _num(self.high)}


def wilson_interval(successes: int, n: int, alpha: float = 0.05) -> Proportion:
    """Wilson score interval for a binomial proportion.

    Chosen over the normal (Wald) interval because review samples are small and the
    proportions of interest (silver precision) sit near 1, where Wald collapses to zero width.
    """
    if not 0 < alpha < 1:
        raise UsageError(f"alpha={alpha} must be between 0 and 1 (exclusive)")
    if n < 0 or not 0 <= successes <= max(n, 0):
        raise UsageError(f"successes={successes} must be between 0 and n={n}")
    if n == 0:
        return Proportion(0, 0, math.nan, math.nan)
    z = NormalDist().inv_cdf(1 - alpha / 2)
    p = successes / n
    denom = 1 + z * z / n
    centre = (p + z * z / (2 * n)) / denom
    half = z * math.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / denom
    return Proportion(successes, n, max(0.0, centre - half), min(1.0, centre + half))


# --- Cohen's kappa ------------------------------------------------------------------------

def cohen_kappa(a: Sequence[Hashable], b: Sequence[Hashable], weights: str | None = None,
                labels: Sequence[Hashable] | None = None) -> float:
    """Cohen's kappa between two raters' labels of the same items.

    ``weights`` None counts only exact matches; "linear" or "quadratic" give partial
    credit by distance between the labels' positions in ``labels`` (default: the sorted
    labels seen). Pass the full grade scale as ``labels`` so distance equals grade
    difference even when a grade was never used. NaN when chance agreement is total.
    """
    if len(a) != len(b):
        raise UsageError(f"the two raters labelled different numbers of items "
                         f"({len(a)} and {len(b)})")
    if not a:
        return math.nan
    cats = list(labels) if labels is not None else sorted(set(a) | set(b))
    index = {c: i for i, c in enumerate(cats)}
    missing = [x for x in (*a, *b) if x not in index]
    if missing:
        raise UsageError(f"label {missing[0]!r} is not among the allowed labels {cats}")
    k = len(cats)
    observed = np.zeros((k, k))
    np.add.at(observed, (np.array([index[x] for x in a]), np.array([index[x] for x in b])), 1)
    expected = np.outer(observed.sum(axis=1), observed.sum(axis=0)) / observed.sum()
    i, j = np.indices((k, k))
    if weights is None:
        w = (i != j).astype(float)
    elif weights == "linear":
        w = np.abs(i - j).astype(float)
    elif weights == "quadratic":
        w = ((i - j) ** 2).astype(float)
    else:
        raise UsageError(f"kappa weights {weights!r} is not one of: linear, quadratic "
                         "(or none)")
    chance = float((w * expected).sum())
    if chance == 0:
        return math.nan
    return 1 - float((w * observed).sum()) / chance


# --- rank correlation ---------------------------------------------------------------------

def kendall_tau_b(x: Sequence[float], y: Sequence[float]) -> float:
    """Kendall's tau-b (ties in either ranking reduce the denominator); NaN if either
    sequence is constant. Meant for short sequences such as system rankings (all pairs)."""
    return float(_tau_b_rows(np.asarray(x, float)[None, :], np.asarray(y, float)[None, :])[0])


def spearman_rho(x: Sequence[float], y: Sequence[float]) -> float:
    """Spearman's rho: Pearson correlation of average ranks; NaN if either is constant."""
    return float(_rho_rows(np.asarray(x, float)[None, :], np.asarray(y, float)[None, :])[0])


def _tau_b_rows(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """tau-b for each row pair of two (replicates x systems) arrays."""
    _check_pair(x, y)
    i, j = np.triu_indices(x.shape[1], k=1)
    sx = np.sign(x[:, i] - x[:, j])
    sy = np.sign(y[:, i] - y[:, j])
    denom = np.sqrt(np.count_nonzero(sx, axis=1) * np.count_nonzero(sy, axis=1).astype(float))
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(denom > 0, (sx * sy).sum(axis=1) / np.where(denom > 0, denom, 1),
                        np.nan)


def _rho_rows(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    _check_pair(x, y)
    rx = _average_ranks(x)
    ry = _average_ranks(y)
    rx -= rx.mean(axis=1, keepdims=True)
    ry -= ry.mean(axis=1, keepdims=True)
    denom = np.sqrt((rx * rx).sum(axis=1) * (ry * ry).sum(axis=1))
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(denom > 0, (rx * ry).sum(axis=1) / np.where(denom > 0, denom, 1),
                        np.nan)


def _check_pair(x: np.ndarray, y: np.ndarray) -> None:
    if x.shape != y.shape:
        raise UsageError(f"rank correlation needs two equally long sequences, got "
                         f"{x.shape[1]} and {y.shape[1]} values")
    if x.shape[1] < 2:
        raise UsageError("rank correlation needs at least two values")


def _average_ranks(x: np.ndarray) -> np.ndarray:
    """Ranks 1..n per row, ties sharing their average rank."""
    order = np.argsort(x, axis=1, kind="stable")
    xs = np.take_along_axis(x, order, axis=1)
    ranks = np.empty_like(x, dtype=float)
    for r in range(x.shape[0]):
        _, first, counts = np.unique(xs[r], return_index=True, return_counts=True)
        avg = np.repeat(first + (counts + 1) / 2, counts)
        ranks[r, order[r]] = avg
    return ranks


# --- do two judgment sets rank the systems alike? -----------------------------------------

@dataclass(frozen=True)
class Correlation:
    """A rank correlation with a bootstrap percentile interval (NaN when not computable)."""

    value: float
    low: float
    high: float

    def as_dict(self) -> dict[str, Any]:
        return {"value": _num(self.value), "low": _num(self.low), "high": _num(self.high)}


@dataclass(frozen=True)
class SystemScore:
    run: str
    score_a: float
    score_b: float
    rank_a: float
    rank_b: float


@dataclass(frozen=True)
class Flip:
    """Two systems ordered one way under judgment set A and the other way under B."""

    first: str  # better under A
    second: str
    diff_a: float  # first - second under A (> 0)
    diff_b: float  # first - second under B (< 0)


@dataclass(frozen=True)
class Agreement:
    """How alike two judgment sets rank a set of systems."""

    metric: str
    queries_a: int
    queries_b: int
    shared: int
    systems: tuple[SystemScore, ...]
    tau: Correlation
    rho: Correlation
    flips: tuple[Flip, ...]
    resamples: int
    seed: int
    confidence: float

    def as_dict(self) -> dict[str, Any]:
        return {
            "metric": self.metric, "queries_a": self.queries_a, "queries_b": self.queries_b,
            "shared_queries": self.shared,
            "systems": [{"run": s.run, "score_a": s.score_a, "score_b": s.score_b,
                         "rank_a": s.rank_a, "rank_b": s.rank_b} for s in self.systems],
            "kendall_tau_b": self.tau.as_dict(), "spearman_rho": self.rho.as_dict(),
            "flips": [{"first": f.first, "second": f.second, "diff_a": f.diff_a,
                       "diff_b": f.diff_b} for f in self.flips],
            "bootstrap": {"resamples": self.resamples, "seed": self.seed,
                          "confidence": self.confidence},
        }


def agree(qrels_a: Qrels, qrels_b: Qrels, runs: Sequence[Run], metric: str = "ndcg@10",
          resamples: int = 2000, seed: int = 0, confidence: float = 0.95) -> Agreement:
    """Score every run under both judgment sets and compare the two system rankings.

    Each set scores a run over its own queries that have at least one relevant item
    (a query with none cannot tell systems apart), as a user of that set would. The
    interval comes from a bootstrap over queries that keeps the pairing where the sets
    share queries: each replicate draws the shared queries once for both sets and the
    queries only one set has separately, recomputes every run's mean under both sets,
    and recomputes tau and rho. Percentile interval; replicates where a ranking is
    constant (correlation undefined) are left out.
    """
    from .metrics import parse_metric, per_query

    column = parse_metric(metric).name
    names = [r.name for r in runs]
    if len(runs) < 2:
        raise UsageError(f"agreement needs at least two runs to rank, got {len(runs)}")
    dupes = sorted({n for n in names if names.count(n) > 1})
    if dupes:
        raise UsageError(f"run name {dupes[0]!r} is given twice; runs are told apart by "
                         "their tag, so rename one")
    if resamples < 0:
        raise UsageError(f"resamples={resamples} must be 0 (no interval) or more")
    if not 0 < confidence < 1:
        raise UsageError(f"confidence={confidence} must be between 0 and 1 (exclusive)")

    def table(qrels: Qrels) -> tuple[list[str], np.ndarray]:
        judged = {q: items for q, items in qrels.items() if any(g > 0 for g in items.values())}
        if not judged:
            raise UsageError("a judgment set has no query with a relevant item (grade 1 or "
                             "more); nothing to rank systems by")
        cols = [per_query(judged, run, [column])[column] for run in runs]
        qids = [str(q) for q in cols[0].index]
        return qids, np.column_stack([c.reindex(cols[0].index).to_numpy(float)
                                      for c in cols])

    qids_a, sa = table(qrels_a)
    qids_b, sb = table(qrels_b)
    mean_a, mean_b = sa.mean(axis=0), sb.mean(axis=0)
    tau = kendall_tau_b(mean_a, mean_b)
    rho = spearman_rho(mean_a, mean_b)

    pos_b = {q: i for i, q in enumerate(qids_b)}
    shared = [q for q in qids_a if q in pos_b]
    ia_shared = np.array([i for i, q in enumerate(qids_a) if q in pos_b], dtype=int)
    ib_shared = np.array([pos_b[q] for q in shared], dtype=int)
    set_a = set(qids_a)
    ia_only = np.array([i for i, q in enumerate(qids_a) if q not in pos_b], dtype=int)
    ib_only = np.array([i for i, q in enumerate(qids_b) if q not in set_a], dtype=int)

    tau_ci = rho_ci = (math.nan, math.nan)
    if resamples > 0:
        rng = np.random.default_rng(seed)
        draw_s = rng.integers(0, len(shared), (resamples, len(shared)))
        draw_a = rng.integers(0, len(ia_only), (resamples, len(ia_only)))
        draw_b = rng.integers(0, len(ib_only), (resamples, len(ib_only)))
        boot_a = _replicate_means(sa, ia_shared[draw_s], ia_only[draw_a])
        boot_b = _replicate_means(sb, ib_shared[draw_s], ib_only[draw_b])
        tau_ci = _percentile(_tau_b_rows(boot_a, boot_b), confidence)
        rho_ci = _percentile(_rho_rows(boot_a, boot_b), confidence)

    rank_a, rank_b = _rank_desc(mean_a), _rank_desc(mean_b)
    systems = tuple(SystemScore(n, float(x), float(y), float(ra), float(rb))
                    for n, x, y, ra, rb in zip(names, mean_a, mean_b, rank_a, rank_b))
    flips = []
    for i, j in combinations(range(len(runs)), 2):
        da, db = mean_a[i] - mean_a[j], mean_b[i] - mean_b[j]
        if da * db < 0:
            first, second = (i, j) if da > 0 else (j, i)
            sign = 1 if da > 0 else -1
            flips.append(Flip(names[first], names[second], float(sign * da), float(sign * db)))
    flips.sort(key=lambda f: (-(f.diff_a - f.diff_b), f.first, f.second))
    return Agreement(column, len(qids_a), len(qids_b), len(shared), systems,
                     Correlation(tau, *tau_ci), Correlation(rho, *rho_ci), tuple(flips),
                     resamples, seed, confidence)


def _replicate_means(scores: np.ndarray, shared: np.ndarray, only: np.ndarray) -> np.ndarray:
    """Per replicate, each system's mean score over the drawn query rows."""
    rows = np.concatenate([shared, only], axis=1)
    return scores[rows].mean(axis=1)


def _percentile(values: np.ndarray, confidence: float) -> tuple[float, float]:
    values = values[~np.isnan(values)]
    if values.size == 0:
        return math.nan, math.nan
    tail = (1 - confidence) / 2
    low, high = np.quantile(values, [tail, 1 - tail])
    return float(low), float(high)


def _rank_desc(x: np.ndarray) -> np.ndarray:
    """Rank 1 = highest score; ties share their average rank."""
    return _average_ranks(-x[None, :])[0]


def _num(x: float) -> float | None:
    return None if math.isnan(x) else x
