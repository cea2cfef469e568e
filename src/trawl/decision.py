"""Which system to ship: the quality-cost frontier, a recommendation under the team's
limits, whether the cheaper candidate is good enough, and how many judged queries would
settle what the figures cannot.

Everything here is a pure function of figures already measured (per-query scores of the
headline metric, latency, index size, build time), so ``eval``, ``demo`` and ``compare``
reach the same verdict from the same numbers, and ``results.json`` carries every figure
the verdict rests on.

Non-inferiority ("the cheaper one is not worse by more than the margin") uses the
one-sided lower bound of the paired difference at level 1 - alpha/2, i.e. the lower end
of the two-sided interval the comparison shows, taken from the same bootstrap resamples
(same seed, same draws of queries). The sample sizes use the normal approximation for a
paired design with Guenther's correction for the t distribution (see ``queries_needed``).
"""

from __future__ import annotations

import json
import math
from collections.abc import Sequence
from dataclasses import asdict, dataclass, replace
from statistics import NormalDist
from pathlib import Path
from typing import Any

import numpy as np

from .errors import InputError, UsageError
from .judgments import Qrels
from .runs import Run
from .stats import MIN_QUERIES, bootstrap_means

DEFAULT_MARGIN = 0.01  # accepted loss of the headline metric (the team's choice)
DEFAULT_HEADLINE = "ndcg@10"
POWER = 0.8  # common practice, no source: the usual power a sample is sized for
SAME_SIZE = 0.05  # index sizes within 5% read as "the same size"
YES, NO, CANT_TELL = "yes", "no", "can't tell"
SILVER_CAUTION = ("provisional: silver judgments rank systems but are no substitute for "
                  "people before shipping; have people judge a sample to confirm it")


@dataclass(frozen=True)
class Limits:
    """What the team accepts: p95 latency (ms, one query at a time), index size (MB),
    and the quality loss ``margin`` of the headline metric (None: the first metric the
    evaluation computes, else ``DEFAULT_HEADLINE``)."""

    max_latency_ms: float | None = None
    max_index_mb: float | None = None
    margin: float = DEFAULT_MARGIN
    headline: str | None = None

    def __post_init__(self) -> None:
        for name in ("max_latency_ms", "max_index_mb"):
            v = getattr(self, name)
            if v is not None and not (math.isfinite(v) and v > 0):
                raise UsageError(f"{name}={v} must be a positive number")
        if not (math.isfinite(self.margin) and 0 <= self.margin < 1):
            raise UsageError(f"margin={self.margin} must be at least 0 and below 1 "
                             f"(a loss of the headline metric, e.g. {DEFAULT_MARGIN})")
        if self.headline is not None:
            from .metrics import parse_metrics

            parse_metrics([self.headline])  # an unknown metric is refused before any work


@dataclass(frozen=True)
class SystemFigures:
    """One system as the decision sees it; None where a figure was not measured."""

    name: str
    p50_ms: float | None = None
    p95_ms: float | None = None
    index_bytes: int | None = None
    build_seconds: float | None = None


@dataclass(frozen=True)
class Candidate:
    """A system's figures, whether it meets the limits and whether another beats it on
    every figure (dominated)."""

    name: str
    quality: float
    p50_ms: float | None
    p95_ms: float | None
    index_bytes: int | None
    build_seconds: float | None
    fits: bool
    excluded_because: tuple[str, ...]
    dominated_by: str | None


@dataclass(frozen=True)
class PairFigures:
    """A candidate against the leader: the paired difference (candidate - leader) of the
    headline metric, its interval, non-inferiority and the queries that would settle it."""

    candidate: str
    leader: str
    n: int
    diff: float
    sd: float
    low: float | None = None  # two-sided 1 - alpha interval, also the one-sided bound
    high: float | None = None
    separated: bool = False  # the interval excludes 0
    non_inferior: str = CANT_TELL  # yes / no / can't tell, against the margin
    # None: no difference to detect, or fewer than stats.MIN_QUERIES queries to size on
    queries_to_separate: int | None = None
    queries_to_confirm: int | None = None  # None also: looks worse than the margin


@dataclass(frozen=True)
class Decision:
    """The verdict, in words and with every figure it rests on."""

    judgment_set: str
    silver: bool
    metric: str
    margin: float
    max_latency_ms: float | None
    max_index_mb: float | None
    alpha: float
    power: float
    resamples: int
    seed: int
    queries: int
    method: str
    candidates: tuple[Candidate, ...]
    pairs: tuple[PairFigures, ...]
    leader: str | None
    recommended: str | None
    verdict: str  # "ship", "can't tell" or "none fits"
    headline: str
    evidence: str
    queries_needed: int | None
    review_sample: int | None  # silver only: queries for people to judge
    caution: str | None
    notes: tuple[str, ...] = ()  # e.g. which figures were not measured

    def as_dict(self) -> dict[str, Any]:
        return _plain(asdict(self))


def _plain(v: Any) -> Any:
    if isinstance(v, dict):
        return {k: _plain(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_plain(x) for x in v]
    if isinstance(v, float) and math.isnan(v):
        return None
    return v


# --- sample sizes ----------------------------------------------------------------------------

def queries_needed(delta: float, sd: float, alpha: float, power: float = POWER,
                   sides: int = 2) -> int | None:
    """Paired queries needed to detect a mean difference ``delta`` with spread ``sd``.

    Method: normal-approximation sample size for a paired (one-sample) design,
    n = ((z_(1-alpha/sides) + z_power) * sd / delta)^2, plus Guenther's (1981) correction
    z_(1-alpha/sides)^2 / 2 for using the t distribution, rounded up. None when
    ``delta`` is not positive (nothing to detect); 2 when ``sd`` is 0.
    """
    if not delta > 0 or not math.isfinite(delta):
        return None
    if sd == 0:
        return 2
    z = NormalDist()
    za = z.inv_cdf(1 - alpha / sides)
    zb = z.inv_cdf(power)
    return max(2, math.ceil(((za + zb) * sd / delta) ** 2 + za * za / 2))


# --- frontier --------------------------------------------------------------------------------

def _costs(c: Candidate) -> tuple[float | None, ...]:
    return (c.p50_ms, c.p95_ms, c.index_bytes, c.build_seconds)


def dominates(a: Candidate, b: Candidate) -> bool:
    """``a`` is at least as good as ``b`` on quality and every cost both have measured,
    and better on one of them. Costs within ``SAME_SIZE`` (5%) of each other count as
    equal: a few hundred bytes or a timing jitter do not make a system dominated. A cost
    ``b`` has measured and ``a`` has not is unknown, not cheaper: ``a`` does not dominate
    ``b`` then (a run without latency figures never pushes a fast one off the frontier)."""
    if any(x is None and y is not None for x, y in zip(_costs(a), _costs(b))):
        return False
    costs = [(x, y) for x, y in zip(_costs(a), _costs(b)) if x is not None and y is not None]
    if a.quality < b.quality or any(x > y * (1 + SAME_SIZE) for x, y in costs):
        return False
    return a.quality > b.quality or any(x < y * (1 - SAME_SIZE) for x, y in costs)


def _candidates(systems: Sequence[SystemFigures], quality: np.ndarray,
                limits: Limits) -> list[Candidate]:
    out = []
    for s, q in zip(systems, quality):
        why = []
        if limits.max_latency_ms is not None:
            if s.p95_ms is None:
                why.append("no latency measured")
            elif s.p95_ms > limits.max_latency_ms:
                why.append(f"p95 {s.p95_ms:.3g} ms over the {limits.max_latency_ms:g} ms limit")
        if limits.max_index_mb is not None:
            if s.index_bytes is None:
                why.append("no index size measured")
            elif s.index_bytes / 1e6 > limits.max_index_mb:
                why.append(f"index {s.index_bytes / 1e6:.3g} MB over the "
                           f"{limits.max_index_mb:g} MB limit")
        out.append(Candidate(s.name, float(q), s.p50_ms, s.p95_ms, s.index_bytes,
                             s.build_seconds, not why, tuple(why), None))
    ranked = sorted(out, key=lambda c: -c.quality)
    return [replace(c, dominated_by=next((o.name for o in ranked
                                          if o is not c and dominates(o, c)), None))
            for c in out]


def _cheaper(a: Candidate, b: Candidate) -> bool:
    """``a`` costs less to serve than ``b``: lower p95, or the same p95 (or none
    measured) and a smaller index."""
    if a.p95_ms is not None and b.p95_ms is not None and a.p95_ms != b.p95_ms:
        return a.p95_ms < b.p95_ms
    return (a.index_bytes is not None and b.index_bytes is not None
            and a.index_bytes < b.index_bytes * (1 - SAME_SIZE))


# --- pairs against the leader ----------------------------------------------------------------

def _pairs(names: Sequence[str], scores: np.ndarray, leader: int, others: Sequence[int],
           margin: float, resamples: int, seed: int, alpha: float,
           power: float) -> list[PairFigures]:
    if not others:
        return []
    diffs = np.stack([scores[j] - scores[leader] for j in others], axis=1)
    n = diffs.shape[0]
    boot = bootstrap_means(diffs, resamples, seed) if n >= MIN_QUERIES else None
    out = []
    for col, j in enumerate(others):
        d = diffs[:, col]
        mean = float(d.mean())
        sd = float(d.std(ddof=1)) if n > 1 else float("nan")
        low = high = None
        if boot is not None:
            if np.all(d == d[0]):
                low = high = mean
            else:
                low, high = (float(x) for x in np.quantile(boot[:, col],
                                                           (alpha / 2, 1 - alpha / 2)))
        verdict = CANT_TELL
        if low is not None and low > -margin:
            verdict = YES
        elif high is not None and high < -margin:
            verdict = NO
        separated = low is not None and (low > 0 or high < 0)
        ok_sd = sd if math.isfinite(sd) else 0.0
        sized = boot is not None  # fewer queries give no sd worth sizing a sample on
        out.append(PairFigures(
            names[j], names[leader], n, mean, ok_sd, low, high, separated, verdict,
            # differences below the margin do not matter: size for at least the margin
            queries_needed(max(abs(mean), margin), ok_sd, alpha, power, sides=2)
            if sized else None,
            # one-sided at alpha/2: z_(1-alpha/2), as for the two-sided separation
            queries_needed(mean + margin, ok_sd, alpha, power, sides=2) if sized else None))
    return out


# --- the decision ----------------------------------------------------------------------------

def decide(systems: Sequence[SystemFigures], scores: np.ndarray | Sequence[Sequence[float]],
           limits: Limits = Limits(), *, judgment_set: str = "", silver: bool = False,
           resamples: int = 10000, seed: int = 0, alpha: float = 0.05,
           power: float = POWER, notes: Sequence[str] = ()) -> Decision:
    """The recommendation for ``systems`` whose per-query headline scores are the rows of
    ``scores`` (systems x queries, the same queries in the same order for every system).

    The leader is the best-scoring system within the limits. The cheapest (lowest p95,
    then smallest index) of the leader and the systems non-inferior to it by the margin
    is recommended. The verdict is "can't tell", with the judged queries that would
    settle it, when a still cheaper system might be within the margin, when the leader
    and the runner-up cost the same and their interval includes 0, or when there are
    fewer than ``stats.MIN_QUERIES`` queries.
    """
    scores = np.asarray(scores, dtype=np.float64)
    if scores.ndim != 2 or scores.shape[0] != len(systems) or len(systems) < 2:
        raise UsageError(f"a decision needs per-query scores of at least two systems, one "
                         f"row each; got {scores.shape} for {len(systems)} system(s)")
    if scores.shape[1] == 0 or not np.isfinite(scores).all():
        raise UsageError("a decision needs finite per-query scores of at least one query")
    names = [s.name for s in systems]
    cands = _candidates(systems, scores.mean(axis=1), limits)
    fits = sorted((i for i, c in enumerate(cands) if c.fits),
                  key=lambda i: (-cands[i].quality, cands[i].p95_ms or math.inf))
    base = dict(judgment_set=judgment_set, silver=silver,
                metric=limits.headline or DEFAULT_HEADLINE,
                margin=limits.margin, max_latency_ms=limits.max_latency_ms,
                max_index_mb=limits.max_index_mb, alpha=alpha, power=power,
                resamples=resamples, seed=seed, queries=int(scores.shape[1]),
                method=METHOD, candidates=tuple(cands), notes=tuple(notes))
    if not fits:
        return Decision(**base, pairs=(), leader=None, recommended=None, verdict="none fits",
                        headline=_none_fits(cands, limits), evidence="", queries_needed=None,
                        review_sample=None, caution=None)
    lead = fits[0]
    pairs = _pairs(names, scores, lead, fits[1:], limits.margin, resamples, seed, alpha, power)
    verdict, chosen, headline, evidence, needed = _verdict(cands, lead, pairs, limits, alpha)
    review, caution = None, None
    if silver:
        review = min(max(needed or MIN_QUERIES, MIN_QUERIES), int(scores.shape[1]))
        caution = SILVER_CAUTION + (
            f" (all {review} queries of the set; {needed} would be needed, so synthesise "
            "more)" if needed and needed > review else "")
    return Decision(**base, pairs=tuple(pairs), leader=names[lead], recommended=chosen,
                    verdict=verdict, headline=headline, evidence=evidence,
                    queries_needed=needed, review_sample=review, caution=caution)


METHOD = ("non-inferiority: lower end of the paired bootstrap interval (one-sided at "
          "1 - alpha/2) against -margin; queries needed: normal-approximation sample size "
          "for a paired design, ((z_a + z_b) * sd / delta)^2 + z_a^2 / 2 (Guenther's t "
          "correction), power 0.8")


def _cost(c: Candidate) -> tuple[float, float]:
    return (c.p95_ms if c.p95_ms is not None else math.inf,
            c.index_bytes if c.index_bytes is not None else math.inf)


def _verdict(cands: Sequence[Candidate], lead: int, pairs: Sequence[PairFigures],
             limits: Limits, alpha: float) -> tuple[str, str, str, str, int | None]:
    """(verdict, recommended, headline, evidence, queries needed) for the pairs against
    the leader: the cheapest of the leader and the systems non-inferior to it is shipped,
    unless a still cheaper system might be good enough too ("can't tell"), or the leader
    and the runner-up cost the same and cannot be told apart."""
    by = {c.name: c for c in cands}
    leader, m = cands[lead], limits.margin
    if not pairs:
        return "ship", leader.name, (f"ship {leader.name}: the only system within the "
                                     f"limits ({_metric(limits)} {leader.quality:.3f})"), "", None
    n = pairs[0].n
    if n < MIN_QUERIES:  # no interval, and no spread worth sizing a sample on
        runner = pairs[0]
        return CANT_TELL, leader.name, (
            f"can't tell: {_queries(n)} too few to decide (fewer than "
            f"{MIN_QUERIES}); {leader.name} leads {runner.candidate} by "
            f"{_signed(-runner.diff)} {_metric(limits)}; judge at least {MIN_QUERIES} "
            f"queries in all ({MIN_QUERIES - n} more)"), (
            f"too few queries to estimate how much the per-query differences spread, so "
            f"no sample size yet; {MIN_QUERIES} give an interval"), MIN_QUERIES
    fine = [p for p in pairs if p.non_inferior == YES]
    chosen = min([leader] + [by[p.candidate] for p in fine], key=_cost)
    open_ = sorted((p for p in pairs if p.non_inferior == CANT_TELL
                    and p.queries_to_confirm is not None and _cheaper(by[p.candidate], chosen)),
                   key=lambda p: _cost(by[p.candidate]))
    if open_:
        p = open_[0]
        head = (f"can't tell whether {p.candidate} is within {m:g} {_metric(limits)} of "
                f"{leader.name} with {n} queries ({_diff(p, alpha)}); "
                f"{_judge(p.queries_to_confirm, n)} to confirm it; until then ship "
                f"{chosen.name}")
        return CANT_TELL, chosen.name, head, _evidence(p, p.queries_to_confirm,
                                                       "confirm it"), p.queries_to_confirm
    if chosen is not leader:
        p = next(p for p in fine if p.candidate == chosen.name)
        head = (f"ship {chosen.name}: not worse than {leader.name} by more than {m:g} "
                f"{_metric(limits)} ({_diff(p, alpha)}), {_costs_vs(chosen, leader)}")
        return "ship", chosen.name, head, (f"{n} judged queries confirm it (about "
                                           f"{p.queries_to_confirm} would, 8 times in 10)"
                                           ), p.queries_to_confirm
    runner = pairs[0]
    rival = by[runner.candidate]
    if runner.separated:
        head = (f"ship {leader.name}: best {_metric(limits)} {leader.quality:.3f}, ahead of "
                f"{runner.candidate} ({_diff(runner, alpha)})")
        return "ship", leader.name, head, f"{n} judged queries separate them", \
            runner.queries_to_separate
    if _cheaper(leader, rival):
        head = (f"ship {leader.name}: best {_metric(limits)} {leader.quality:.3f} and "
                f"cheaper than the runner-up {runner.candidate} ({_diff(runner, alpha)})")
        return "ship", leader.name, head, (f"{n} judged queries; the two are not told apart, "
                                           "but the runner-up costs more"), None
    needed = runner.queries_to_separate
    head = (f"can't tell {leader.name} from {runner.candidate} with {n} queries "
            f"({_diff(runner, alpha)}); {_judge(needed, n)} to separate them")
    return CANT_TELL, leader.name, head, _evidence(runner, needed, "separate them"), needed


def _metric(limits: Limits) -> str:
    return limits.headline or DEFAULT_HEADLINE


def _queries(n: int) -> str:
    return "1 judged query is" if n == 1 else f"{n} judged queries are"


def _judge(needed: int | None, n: int) -> str:
    if needed is None:
        return "no number of judged queries would change that"
    return f"judge about {needed} queries in all ({max(needed - n, 0)} more)"


def _evidence(p: PairFigures, needed: int | None, goal: str) -> str:
    if needed is None:
        return "no difference to detect: the two score the same on every query"
    return (f"sd of the per-query differences {p.sd:.3f}; {needed} judged queries would "
            f"{goal} 8 times in 10")


def _signed(v: float) -> str:
    return "0.000" if abs(v) < 0.0005 else f"{v:+.3f}"


def _diff(p: PairFigures, alpha: float) -> str:
    if p.low is None:
        return f"difference {_signed(p.diff)}, {MIN_QUERIES}+ queries needed for an interval"
    return (f"difference {_signed(p.diff)}, {1 - alpha:.0%} interval {_signed(p.low)} to "
            f"{_signed(p.high)}")


def _costs_vs(c: Candidate, ref: Candidate) -> str:
    """How much cheaper ``c`` is than ``ref``, in words."""
    parts = []
    if c.p95_ms and ref.p95_ms:
        parts.append(f"{ref.p95_ms / c.p95_ms:.1f}x faster at p95 ({c.p95_ms:.3g} vs "
                     f"{ref.p95_ms:.3g} ms)")
    else:
        parts.append("latency not measured")
    if c.index_bytes and ref.index_bytes:
        ratio = ref.index_bytes / c.index_bytes
        parts.append("same index size" if abs(ratio - 1) <= SAME_SIZE else
                     f"index {_mb(c.index_bytes)} vs {_mb(ref.index_bytes)}")
    return ", ".join(parts)


def _mb(n: int) -> str:
    return f"{n / 1e6:.3g} MB"


def _none_fits(cands: Sequence[Candidate], limits: Limits) -> str:
    asked = [f"p95 <= {limits.max_latency_ms:g} ms" if limits.max_latency_ms else "",
             f"index <= {limits.max_index_mb:g} MB" if limits.max_index_mb else ""]
    why = "; ".join(f"{c.name}: {', '.join(c.excluded_because)}" for c in cands)
    return f"no system meets the limits ({', '.join(a for a in asked if a)}): {why}"


def frontier(d: Decision) -> tuple[list[str], list[tuple[str, str]]]:
    """Names on the quality-cost frontier, and (dominated, dominated by) pairs."""
    on = [c.name for c in d.candidates if c.dominated_by is None]
    off = [(c.name, c.dominated_by) for c in d.candidates if c.dominated_by is not None]
    return on, off


# --- runs given on the command line ------------------------------------------------------------

def sidecar_figures(run_path: str | Path, name: str) -> SystemFigures | None:
    """Latency and index size from ``RUN.latency.json`` beside a run; None when absent."""
    sidecar = Path(f"{run_path}.latency.json")
    if not sidecar.is_file():
        return None
    try:
        data = json.loads(sidecar.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError(sidecar, f"not a latency file trawl wrote ({exc}); delete it or "
                                  "measure again") from None
    if not isinstance(data, dict):
        raise InputError(sidecar, "expected a JSON object of latency figures")
    return SystemFigures(name, _number(data.get("p50_ms")), _number(data.get("p95_ms")),
                         data.get("index_bytes") if isinstance(data.get("index_bytes"), int)
                         else None)


def _number(v: Any) -> float | None:
    return float(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else None


def decide_runs(qrels: Qrels, runs: Sequence[Run], run_paths: Sequence[str | Path],
                limits: Limits = Limits(), *, silver: bool = False, resamples: int = 10000,
                seed: int = 0, alpha: float = 0.05, judgment_set: str = "",
                first_metric: str = DEFAULT_HEADLINE) -> Decision:
    """The decision for runs read from files, with latency and index size from each run's
    ``.latency.json`` when it is there (the notes say which runs have none). Without a
    headline metric in ``limits`` it rests on ``first_metric``."""
    from .metrics import parse_metrics
    from .scores import score_runs

    headline = parse_metrics([limits.headline or first_metric])[0].name
    limits = replace(limits, headline=headline)
    figures, missing = [], []
    for run, path in zip(runs, run_paths):
        found = sidecar_figures(path, run.name)
        if found is None:
            missing.append(run.name)
        figures.append(found or SystemFigures(run.name))
    notes = [f"no latency or index size for {', '.join(missing)} (no RUN.latency.json "
             "beside the run): the decision weighs quality only for them"] if missing else []
    report = score_runs(qrels, list(runs), [headline])
    return decide(figures, report.values[:, :, 0], limits, judgment_set=judgment_set,
                  silver=silver, resamples=resamples, seed=seed, alpha=alpha, notes=notes)
