"""Do two judgment sets rank systems alike? System-ranking agreement (``agree``).

Silver judgments are only useful if they rank systems the way people's judgments do.
``agree`` scores every run under two judgment sets and measures how alike the two system
rankings are (Kendall's tau-b, Spearman's rho) with a bootstrap interval over queries.
The plain-array kernels (tau-b, rho, ranks) live in ``stats``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from itertools import combinations
from typing import Any

import numpy as np

from .errors import UsageError
from .runs import Run
from .stats import (average_ranks, kendall_tau_b, none_if_nan, rho_rows, spearman_rho,
                    tau_b_rows, too_few)

Qrels = Mapping[str, Mapping[str, int]]


# --- do two judgment sets rank the systems alike? -----------------------------------------

@dataclass(frozen=True)
class Correlation:
    """A rank correlation with a bootstrap percentile interval (NaN when not computable)."""

    value: float
    low: float
    high: float

    def as_dict(self) -> dict[str, Any]:
        return {"value": none_if_nan(self.value), "low": none_if_nan(self.low),
                "high": none_if_nan(self.high)}


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
    # Share of bootstrap replicates in which A still puts first ahead (held_a) and B
    # still puts it behind (held_b); None without an interval. A flip on a pair that a set
    # holds in, say, 60% of replicates is within that set's own noise.
    held_a: float | None = None
    held_b: float | None = None


FIRM = 0.9  # share of replicates in which a set must keep a pair's order to settle it


@dataclass(frozen=True)
class FirmPairs:
    """The pairs of systems each set settles (keeps in order in at least ``threshold`` of
    bootstrap replicates) and how many of those the other set orders the other way. A
    swap of a pair neither set settles is within their noise; a swap of a pair the
    reference set settles is a real disagreement."""

    threshold: float
    pairs: int
    settled_a: int
    swapped_by_b: int
    settled_b: int
    swapped_by_a: int

    def as_dict(self) -> dict[str, Any]:
        return {"threshold": self.threshold, "pairs": self.pairs,
                "settled_a": self.settled_a, "swapped_by_b": self.swapped_by_b,
                "settled_b": self.settled_b, "swapped_by_a": self.swapped_by_a}


def seen_from(firm: Mapping[str, Any], side: str) -> tuple[int, int]:
    """For the set on ``side`` ('a' or 'b') of ``FirmPairs.as_dict()``: the pairs the other
    set settles, and how many of those this set swaps."""
    other = "b" if side == "a" else "a"
    return firm[f"settled_{other}"], firm[f"swapped_by_{side}"]


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
    note: str | None = None  # stats.TOO_FEW when a set has too few queries for an interval
    identical: int = 0  # shared queries both sets judge exactly alike (item by item)
    firm: FirmPairs | None = None  # None without an interval

    def as_dict(self) -> dict[str, Any]:
        return {
            "metric": self.metric, "queries_a": self.queries_a, "queries_b": self.queries_b,
            "shared_queries": self.shared, "identical_queries": self.identical,
            "systems": [{"run": s.run, "score_a": s.score_a, "score_b": s.score_b,
                         "rank_a": s.rank_a, "rank_b": s.rank_b} for s in self.systems],
            "kendall_tau_b": self.tau.as_dict(), "spearman_rho": self.rho.as_dict(),
            "flips": [{"first": f.first, "second": f.second, "diff_a": f.diff_a,
                       "diff_b": f.diff_b, "held_a": f.held_a, "held_b": f.held_b}
                      for f in self.flips],
            "bootstrap": {"resamples": self.resamples, "seed": self.seed,
                          "confidence": self.confidence, "note": self.note},
            "firm_pairs": self.firm.as_dict() if self.firm else None,
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
    boot_a = boot_b = None
    note = too_few(min(len(qids_a), len(qids_b))) if resamples > 0 else None
    if resamples > 0 and note is None:
        rng = np.random.default_rng(seed)
        draw_s = rng.integers(0, len(shared), (resamples, len(shared)))
        draw_a = rng.integers(0, len(ia_only), (resamples, len(ia_only)))
        draw_b = rng.integers(0, len(ib_only), (resamples, len(ib_only)))
        boot_a = _replicate_means(sa, ia_shared[draw_s], ia_only[draw_a])
        boot_b = _replicate_means(sb, ib_shared[draw_s], ib_only[draw_b])
        tau_ci = _percentile(tau_b_rows(boot_a, boot_b), confidence)
        rho_ci = _percentile(rho_rows(boot_a, boot_b), confidence)

    rank_a, rank_b = _rank_desc(mean_a), _rank_desc(mean_b)
    systems = tuple(SystemScore(n, float(x), float(y), float(ra), float(rb))
                    for n, x, y, ra, rb in zip(names, mean_a, mean_b, rank_a, rank_b))
    identical = sum(1 for q in shared if qrels_a[q] == qrels_b[q])
    return Agreement(column, len(qids_a), len(qids_b), len(shared), systems,
                     Correlation(tau, *tau_ci), Correlation(rho, *rho_ci),
                     _flips(names, mean_a, mean_b, boot_a, boot_b),
                     resamples, seed, confidence, note, identical,
                     None if boot_a is None or boot_b is None
                     else _firm(mean_a, mean_b, boot_a, boot_b))


def kept_shares(mean: np.ndarray, boot: np.ndarray) -> np.ndarray:
    """``[i, j]``: the share of bootstrap replicates (rows of ``boot``, one column per
    system) that order systems i and j as ``mean`` does; 0 where ``mean`` ties them."""
    order = np.sign(mean[:, None] - mean[None, :])
    kept = (np.sign(boot[:, :, None] - boot[:, None, :]) == order).mean(axis=0)
    return np.where(order != 0, kept, 0.0)


def _firm(mean_a: np.ndarray, mean_b: np.ndarray, boot_a: np.ndarray,
          boot_b: np.ndarray) -> FirmPairs:
    """Which pairs each set settles, and how many of them the other swaps."""
    pairs = list(combinations(range(len(mean_a)), 2))

    def settled(mean: np.ndarray, boot: np.ndarray, other: np.ndarray) -> tuple[int, int]:
        kept = kept_shares(mean, boot)
        firm = [(i, j) for i, j in pairs if kept[i, j] >= FIRM]
        return len(firm), sum(int((mean[i] - mean[j]) * (other[i] - other[j]) < 0)
                              for i, j in firm)

    return FirmPairs(FIRM, len(pairs), *settled(mean_a, boot_a, mean_b),
                     *settled(mean_b, boot_b, mean_a))


def _flips(names: Sequence[str], mean_a: np.ndarray, mean_b: np.ndarray,
           boot_a: np.ndarray | None, boot_b: np.ndarray | None) -> tuple[Flip, ...]:
    """Pairs ordered one way under A and the other under B, widest disagreement first,
    with the share of bootstrap replicates in which each set keeps its order."""
    kept = (None if boot_a is None or boot_b is None
            else (kept_shares(mean_a, boot_a), kept_shares(mean_b, boot_b)))
    flips = []
    for i, j in combinations(range(len(names)), 2):
        da, db = mean_a[i] - mean_a[j], mean_b[i] - mean_b[j]
        if da * db < 0:
            sign = 1 if da > 0 else -1
            held = (None, None) if kept is None else (float(kept[0][i, j]), float(kept[1][i, j]))
            first, second = (i, j) if da > 0 else (j, i)
            flips.append(Flip(names[first], names[second], float(sign * da), float(sign * db),
                              *held))
    flips.sort(key=lambda f: (-(f.diff_a - f.diff_b), f.first, f.second))
    return tuple(flips)


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
    return average_ranks(-x[None, :])[0]

