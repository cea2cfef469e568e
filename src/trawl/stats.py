"""Plain-array statistics: paired significance for per-query scores (bootstrap, sign-flip
randomisation, Holm, effect size), proportions (Wilson interval), rater agreement (Cohen's
kappa) and rank correlation (Kendall's tau-b, Spearman's rho).

For significance, two systems scored on the same queries are compared through the
per-query differences ``d = a - b``; every statistic there is about their mean. Kernels take a
matrix of differences (queries x comparisons) so one set of resamples serves every
comparison at once: a resample is a vector of counts (bootstrap) or signs
(randomisation) and the resampled means of all comparisons are one matrix product.
That is what makes 10,000 resamples of thousands of queries take a fraction of a
second, and it means every comparison in a table is judged on the same resamples.
"""

from __future__ import annotations

import math
from collections.abc import Hashable, Iterator, Sequence
from dataclasses import dataclass
from statistics import NormalDist
from typing import Any

import numpy as np

from .errors import UsageError

METHODS = ("percentile", "bca")
CELLS_PER_CHUNK = 4_000_000  # resamples x queries held at once (32 MB of float64)
EXACT_SIGNS_UP_TO = 16  # queries; more would make the 2^n sign patterns too big to hold
# Common practice, no source: below this many queries a bootstrap has too few distinct
# resamples (C(2n - 1, n): 3 at n = 2, 126 at n = 5) to place its 2.5% and 97.5%
# quantiles, and its p-value claims a certainty it does not have ("p <0.001" from two
# queries). Intervals and bootstrap p-values of smaller groups are not given.
MIN_QUERIES = 10
TOO_FEW = "too few queries"  # what is shown instead of an interval or bootstrap p-value
RTOL = 1e-9  # resampled statistics this close to the observed one count as "as extreme"


@dataclass(frozen=True)
class Estimate:
    """Mean difference with its confidence interval and two-sided bootstrap p-value."""

    mean: float
    low: float
    high: float
    n: int
    p_value: float


def differences(a: Sequence[float] | np.ndarray, b: Sequence[float] | np.ndarray) -> np.ndarray:
    """``a - b`` as float64, after checking the two are paired and finite."""
    a = np.asarray(a, dtype=np.float64)
    b = np.asarray(b, dtype=np.float64)
    if a.ndim != 1 or a.shape != b.shape:
        raise UsageError(f"paired scores must be two 1-D arrays of equal length, got shapes "
                         f"{a.shape} and {b.shape}")
    if a.size == 0:
        raise UsageError("paired scores are empty; at least one query is needed")
    d = a - b
    if not np.isfinite(d).all():
        raise UsageError("paired scores contain NaN or infinite values")
    return d


def _check(resamples: int, method: str = "percentile", alpha: float = 0.05) -> None:
    if resamples < 1:
        raise UsageError(f"resamples={resamples} must be at least 1; 10000 is usual")
    if method not in METHODS:
        raise UsageError(f"interval method {method!r} is not one of: {', '.join(METHODS)}")
    if not 0 < alpha < 1:
        raise UsageError(f"alpha={alpha} must lie between 0 and 1, e.g. 0.05")


def _chunks(n: int, resamples: int) -> Iterator[int]:
    """Resample counts per block; depends on n only, so results never depend on width."""
    size = max(1, CELLS_PER_CHUNK // n)
    for start in range(0, resamples, size):
        yield min(size, resamples - start)


def too_few(n: int) -> str | None:
    """``TOO_FEW`` when ``n`` queries are too few for a bootstrap, else None."""
    return TOO_FEW if n < MIN_QUERIES else None


def few_queries_note(n: int) -> str:
    """What a reader must know about a group of ``n < MIN_QUERIES`` queries."""
    floor = 2.0 ** (1 - n)  # the observed pattern and its mirror image, of 2^n
    return (f"fewer than {MIN_QUERIES}: no bootstrap interval or bootstrap p-value "
            f"({TOO_FEW}), and the exact randomisation p-value cannot fall below {floor:.3g}")


# --- bootstrap -----------------------------------------------------------------------------

def bootstrap_means(values: np.ndarray, resamples: int, seed: int) -> np.ndarray:
    """Means of each column over ``resamples`` bootstrap resamples of the rows.

    Rows (queries) are drawn with replacement, the same draws for every column, so
    paired structure is kept. Returns an array (resamples x columns).
    """
    values = np.asarray(values, dtype=np.float64)
    n = values.shape[0]
    rng = np.random.default_rng(seed)
    out = np.empty((resamples, values.shape[1]), dtype=np.float64)
    done = 0
    small = np.uint16 if n <= 2 ** 16 else np.int64  # 16-bit draws are a third cheaper
    for c in _chunks(n, resamples):
        draws = rng.integers(0, n, size=(c, n), dtype=small).astype(np.intp)
        draws += np.arange(c, dtype=np.intp)[:, None] * n
        counts = np.bincount(draws.ravel(), minlength=c * n).reshape(c, n)
        out[done:done + c] = (counts @ values) / n
        done += c
    return out


def _quantiles(sample: np.ndarray, levels: Sequence[float]) -> tuple[float, float]:
    low, high = np.quantile(sample, levels)  # linear interpolation, as scipy.stats.bootstrap
    return float(low), float(high)


def _bca_levels(d: np.ndarray, boot: np.ndarray, alpha: float) -> tuple[float, float] | None:
    """BCa-adjusted quantile levels for the mean of ``d``; None when undefined."""
    mean = d.mean()
    below = (np.count_nonzero(boot < mean) + np.count_nonzero(boot <= mean)) / (2 * boot.size)
    if not 0 < below < 1:
        return None
    normal = NormalDist()
    z0 = normal.inv_cdf(below)
    u = d - mean  # jackknife influence of each query on the mean
    accel = (u ** 3).sum() / (6 * (u ** 2).sum() ** 1.5)
    levels = []
    for z in (normal.inv_cdf(alpha / 2), normal.inv_cdf(1 - alpha / 2)):
        levels.append(normal.cdf(z0 + (z0 + z) / (1 - accel * (z0 + z))))
    return levels[0], levels[1]


def _interval(d: np.ndarray, boot: np.ndarray, method: str, alpha: float) -> tuple[float, float]:
    if np.all(d == d[0]):  # no spread: every resample has the same mean
        return float(d[0]), float(d[0])
    if method == "bca":
        levels = _bca_levels(d, boot, alpha)
        return (float("nan"), float("nan")) if levels is None else _quantiles(boot, levels)
    return _quantiles(boot, (alpha / 2, 1 - alpha / 2))


def _as_extreme(resampled: np.ndarray, observed: np.ndarray) -> np.ndarray:
    """Per column: how many ``|resampled|`` reach ``|observed|`` (with float tolerance)."""
    edge = np.abs(observed) * (1 - RTOL) - 1e-12
    return np.count_nonzero(np.abs(resampled) >= edge, axis=0)


def bootstrap_many(diffs: np.ndarray, resamples: int = 10000, seed: int = 0,
                   method: str = "percentile", alpha: float = 0.05) -> list[Estimate]:
    """``paired_bootstrap`` for each column of a (queries x comparisons) difference matrix.

    With a single query the interval is undefined (NaN) and the p-value 1. The p-value
    is two-sided, from the bootstrap distribution shifted to mean zero (the
    null hypothesis): the share of resampled means at least as far from the observed
    mean as the observed mean is from zero, counting the observed sample itself.
    """
    _check(resamples, method, alpha)
    diffs = np.asarray(diffs, dtype=np.float64)
    boot = bootstrap_means(diffs, resamples, seed)
    observed = diffs.mean(axis=0)
    extreme = _as_extreme(boot - observed, observed)
    n = diffs.shape[0]
    out = []
    for j in range(diffs.shape[1]):
        if n < 2:  # one query: nothing to resample, nothing to conclude
            low, high, p = float("nan"), float("nan"), 1.0
        else:
            low, high = _interval(diffs[:, j], boot[:, j], method, alpha)
            p = 1.0 if observed[j] == 0 else (1 + extreme[j]) / (resamples + 1)
        out.append(Estimate(float(observed[j]), low, high, n, float(p)))
    return out


def paired_bootstrap(a: Sequence[float] | np.ndarray, b: Sequence[float] | np.ndarray,
                     resamples: int = 10000, seed: int = 0, method: str = "percentile",
                     alpha: float = 0.05) -> Estimate:
    """Mean of ``a - b`` with a paired bootstrap interval (percentile or BCa) and p-value."""
    return bootstrap_many(differences(a, b)[:, None], resamples, seed, method, alpha)[0]


def bootstrap_intervals(values: np.ndarray, resamples: int = 10000, seed: int = 0,
                        alpha: float = 0.05) -> list[tuple[float, float]]:
    """Percentile bootstrap interval of the mean of each column (queries x columns)."""
    _check(resamples, "percentile", alpha)
    values = np.asarray(values, dtype=np.float64)
    boot = bootstrap_means(values, resamples, seed)
    return [_interval(values[:, j], boot[:, j], "percentile", alpha)
            for j in range(values.shape[1])]


# --- randomisation (sign-flip) test ----------------------------------------------------------

def _sign_blocks(n: int, resamples: int, seed: int) -> Iterator[np.ndarray]:
    """Blocks of random +-1 rows (resamples x n), drawn from a seeded bit stream."""
    rng = np.random.default_rng(seed)
    for c in _chunks(n, resamples):
        bits = np.unpackbits(np.frombuffer(rng.bytes((c * n + 7) // 8), dtype=np.uint8))
        yield 1.0 - 2.0 * bits[: c * n].reshape(c, n)


def randomisation_many(diffs: np.ndarray, resamples: int = 10000, seed: int = 0) -> np.ndarray:
    """Two-sided sign-flip p-values for each column of a (queries x comparisons) matrix.

    Under the null hypothesis each query's difference is as likely to have the other
    sign. With few queries (2^n <= resamples, or fewer than MIN_QUERIES whatever the
    number of resamples) every sign pattern is enumerated and the p-value is exact;
    otherwise it is ``(1 + as extreme) / (1 + resamples)``.
    """
    _check(resamples)
    diffs = np.asarray(diffs, dtype=np.float64)
    n = diffs.shape[0]
    observed = diffs.sum(axis=0)
    if n <= EXACT_SIGNS_UP_TO and (2 ** n <= resamples or n < MIN_QUERIES):
        patterns = (np.arange(2 ** n)[:, None] >> np.arange(n)) & 1
        flipped = (1.0 - 2.0 * patterns) @ diffs
        return _as_extreme(flipped, observed) / 2 ** n
    extreme = np.zeros(diffs.shape[1], dtype=np.int64)
    for signs in _sign_blocks(n, resamples, seed):
        extreme += _as_extreme(signs @ diffs, observed)
    return (1 + extreme) / (resamples + 1)


def randomisation_test(a: Sequence[float] | np.ndarray, b: Sequence[float] | np.ndarray,
                       resamples: int = 10000, seed: int = 0) -> float:
    """Two-sided p-value of a paired sign-flip randomisation test on the mean of ``a - b``."""
    return float(randomisation_many(differences(a, b)[:, None], resamples, seed)[0])


# --- multiple comparisons and effect size ----------------------------------------------------

def holm(pvalues: Sequence[float] | np.ndarray) -> np.ndarray:
    """Holm-Bonferroni adjusted p-values, in the input order; NaNs stay NaN and are not
    counted as tests."""
    p = np.asarray(pvalues, dtype=np.float64)
    out = np.full(p.shape, np.nan)
    ok = np.flatnonzero(~np.isnan(p))
    order = ok[np.argsort(p[ok], kind="stable")]
    m = order.size
    adjusted = np.maximum.accumulate(p[order] * np.arange(m, 0, -1))
    out[order] = np.minimum(adjusted, 1.0)
    return out


def effect_size(a: Sequence[float] | np.ndarray, b: Sequence[float] | np.ndarray) -> float:
    """Standardised mean difference of paired scores: mean(a - b) / sd(a - b).

    0 when every difference is 0; NaN when there is a single query or the differences
    are all equal but not 0 (no spread to scale by).
    """
    return effect_sizes(differences(a, b)[:, None])[0]


def effect_sizes(diffs: np.ndarray) -> list[float]:
    diffs = np.asarray(diffs, dtype=np.float64)
    if diffs.shape[0] < 2:
        return [float("nan")] * diffs.shape[1]
    mean = diffs.mean(axis=0)
    sd = diffs.std(axis=0, ddof=1)
    return [0.0 if (s == 0 and m == 0) else float("nan") if s == 0 else float(m / s)
            for m, s in zip(mean.tolist(), sd.tolist())]


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
        return {"successes": self.successes, "n": self.n, "value": none_if_nan(self.value),
                "low": none_if_nan(self.low), "high": none_if_nan(self.high)}


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
    return float(tau_b_rows(np.asarray(x, float)[None, :], np.asarray(y, float)[None, :])[0])


def spearman_rho(x: Sequence[float], y: Sequence[float]) -> float:
    """Spearman's rho: Pearson correlation of average ranks; NaN if either is constant."""
    return float(rho_rows(np.asarray(x, float)[None, :], np.asarray(y, float)[None, :])[0])


def tau_b_rows(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """tau-b for each row pair of two (replicates x systems) arrays."""
    _check_pair(x, y)
    i, j = np.triu_indices(x.shape[1], k=1)
    sx = np.sign(x[:, i] - x[:, j])
    sy = np.sign(y[:, i] - y[:, j])
    denom = np.sqrt(np.count_nonzero(sx, axis=1) * np.count_nonzero(sy, axis=1).astype(float))
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(denom > 0, (sx * sy).sum(axis=1) / np.where(denom > 0, denom, 1),
                        np.nan)


def rho_rows(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Spearman's rho for each row pair of two (replicates x systems) arrays."""
    _check_pair(x, y)
    rx = average_ranks(x)
    ry = average_ranks(y)
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


def average_ranks(x: np.ndarray) -> np.ndarray:
    """Ranks 1..n per row, ties sharing their average rank."""
    order = np.argsort(x, axis=1, kind="stable")
    xs = np.take_along_axis(x, order, axis=1)
    ranks = np.empty_like(x, dtype=float)
    for r in range(x.shape[0]):
        _, first, counts = np.unique(xs[r], return_index=True, return_counts=True)
        avg = np.repeat(first + (counts + 1) / 2, counts)
        ranks[r, order[r]] = avg
    return ranks


def none_if_nan(x: float) -> float | None:
    """``x``, or None when it is NaN (JSON has no NaN)."""
    return None if math.isnan(x) else x
