"""Each run against a baseline: paired differences, intervals, p-values, Holm correction.

For every run other than the baseline, every metric and every group of queries (all
queries, then each destination type when a catalogue is given) one row holds the mean
difference (run minus baseline), its paired bootstrap interval, two-sided p-values
from the paired bootstrap and from a sign-flip randomisation test, the randomisation
p-value after Holm's correction within its family, and an effect size.

Correction families: the headline family is every run against the baseline on the first
metric over all queries, the question a decision rests on; it is corrected on its own,
so adding metrics or destination types does not water it down. Every other (metric,
group) is an exploratory family of its own (the runs against the baseline on that metric
and group), corrected within itself only; its rows say ``family="exploratory"``.

The corrected p-value (and so the significance mark) comes from the randomisation
test because it stays valid with few queries: it is exact when every sign pattern can
be enumerated, while the bootstrap has no spread to resample from one or two queries
and then claims certainty it does not have.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import asdict, dataclass
from typing import Any

import numpy as np

from .catalogue import Catalogue
from .destinations import TYPE_RULE, type_tally
from .errors import UsageError
from .judgments import Qrels
from .metrics import DEFAULT_METRICS, Metric
from .progress import progress
from .runs import Run
from .scores import ScoreReport, count, score_runs
from .stats import (Estimate, bootstrap_many, effect_sizes, few_queries_note, holm,
                    randomisation_many, too_few)

FEW_QUERIES = 20  # common practice, no source: below this a per-type test says little
HEADLINE, EXPLORATORY = "headline", "exploratory"
nan = float("nan")


@dataclass(frozen=True)
class ComparisonRow:
    """One run vs the baseline on one metric over one group (``type=None``: all queries)."""

    run: str
    baseline: str
    metric: str
    type: str | None
    n: int
    run_mean: float
    baseline_mean: float
    diff: float
    low: float
    high: float
    p_bootstrap: float
    p_randomisation: float
    p_corrected: float
    effect: float
    note: str | None = None  # stats.TOO_FEW when the interval and p_bootstrap are not given
    family: str = "headline"  # the Holm family: HEADLINE or EXPLORATORY (module doc)

    def as_dict(self) -> dict[str, Any]:
        return {k: (None if isinstance(v, float) and np.isnan(v) else v)
                for k, v in asdict(self).items()}


@dataclass(frozen=True)
class Comparison:
    """All rows of a comparison and how they were computed."""

    baseline: str
    runs: tuple[str, ...]
    metrics: tuple[str, ...]
    queries: int
    groups: Mapping[str | None, int]  # group -> number of queries
    rows: tuple[ComparisonRow, ...]
    resamples: int
    seed: int
    method: str
    alpha: float
    warnings: tuple[str, ...]
    tally: str = ""  # how the per-type query counts add up (destinations.type_tally)

    def as_dict(self) -> dict[str, Any]:
        return {
            "baseline": self.baseline,
            "runs": list(self.runs),
            "metrics": list(self.metrics),
            "queries": self.queries,
            "groups": [{"type": g, "n": n} for g, n in self.groups.items()],
            "type_rule": (f"{TYPE_RULE}; {self.tally}" if self.tally else TYPE_RULE)
            if len(self.groups) > 1 else None,
            "resamples": self.resamples,
            "seed": self.seed,
            "interval": self.method,
            "alpha": self.alpha,
            "correction": correction_rule(self.metrics[0]),
            "rows": [r.as_dict() for r in self.rows],
            "warnings": list(self.warnings),
        }


def pick_baseline(runs: Sequence[Run], baseline: str | Run | None) -> list[Run]:
    """The runs with the baseline first; a name must be one of the runs' names."""
    runs = list(runs)
    if baseline is None:
        return runs
    if isinstance(baseline, Run):
        rest = [r for r in runs if r.name != baseline.name]
        return [baseline, *rest]
    for i, r in enumerate(runs):
        if r.name == baseline:
            return [r, *runs[:i], *runs[i + 1:]]
    raise UsageError(f"baseline {baseline!r} is not one of the runs: "
                     f"{', '.join(r.name for r in runs)}")


def compare_runs(qrels: Qrels, runs: Sequence[Run], metrics: Iterable[str | Metric] = DEFAULT_METRICS,
                 baseline: str | Run | None = None, resamples: int = 10000, seed: int = 0,
                 method: str = "percentile", catalogue: Catalogue | None = None,
                 alpha: float = 0.05, quiet: bool = True) -> Comparison:
    """Compare every run with the baseline (default: the first run)."""
    ordered = pick_baseline(runs, baseline)
    if len(ordered) < 2:
        raise UsageError("comparing needs at least two runs (a baseline and one more)")
    report = score_runs(qrels, ordered, metrics, catalogue)
    return compare_scores(report, resamples, seed, method, alpha, quiet)


def compare_scores(report: ScoreReport, resamples: int = 10000, seed: int = 0,
                   method: str = "percentile", alpha: float = 0.05,
                   quiet: bool = True) -> Comparison:
    """Compare the runs of a score report with its first run."""
    runs, metrics = report.runs, report.metrics
    if len(runs) < 2:
        raise UsageError("comparing needs at least two runs (a baseline and one more)")
    values = report.values
    others = range(1, len(runs))
    groups = report.groups()
    pending: list[dict[str, Any]] = []
    warnings = list(report.warnings)
    with progress(len(groups), "comparing", quiet, unit="group") as bar:
        for group, rows in groups.items():
            sub = values[:, rows, :]
            diffs = np.concatenate([sub[r] - sub[0] for r in others], axis=1)
            note = too_few(len(rows))
            estimates = (bootstrap_many(diffs, resamples, seed, method, alpha) if note is None
                         else [Estimate(float(m), nan, nan, len(rows), nan)
                               for m in diffs.mean(axis=0)])
            p_rand = randomisation_many(diffs, resamples, seed)
            effects = effect_sizes(diffs)
            means = sub.mean(axis=1)
            for j, est in enumerate(estimates):
                r, m = divmod(j, len(metrics))
                r += 1
                pending.append(dict(run=runs[r], baseline=runs[0], metric=metrics[m],
                                    type=group, n=len(rows), run_mean=float(means[r, m]),
                                    baseline_mean=float(means[0, m]), diff=est.mean,
                                    low=est.low, high=est.high, p_bootstrap=est.p_value,
                                    p_randomisation=float(p_rand[j]), effect=effects[j],
                                    note=note))
            if len(rows) < FEW_QUERIES:
                where = "all queries" if group is None else f"type {group!r}"
                warnings.append(f"{where}: only {count(len(rows), 'query', 'queries')} "
                                f"(fewer than {FEW_QUERIES}); its differences and p-values "
                                "say little" + (f"; {few_queries_note(len(rows))}"
                                                if note else ""))
            bar.update()
    rows_out = tuple(_corrected(pending, metrics[0]))
    return Comparison(runs[0], runs, metrics, len(report.qids),
                      {g: len(r) for g, r in groups.items()}, rows_out, resamples, seed,
                      method, alpha, tuple(warnings),
                      type_tally(report.types, len(report.qids)) if report.types else "")


def correction_rule(headline: str) -> str:
    """The correction families in words (for JSON and captions)."""
    return (f"holm over the p_randomisation within each family: the headline family is "
            f"every run vs the baseline on {headline} over all queries; each other metric "
            f"and destination type is an exploratory family corrected only within itself")


def _corrected(pending: list[dict[str, Any]], headline: str) -> list[ComparisonRow]:
    """The rows with Holm's correction applied within each (metric, group) family."""
    families: dict[tuple[str, str | None], list[int]] = {}
    for i, p in enumerate(pending):
        families.setdefault((p["metric"], p["type"]), []).append(i)
    corrected = [nan] * len(pending)
    for rows in families.values():
        for i, c in zip(rows, holm([pending[i]["p_randomisation"] for i in rows])):
            corrected[i] = float(c)
    return [ComparisonRow(p_corrected=c, family=HEADLINE if (p["metric"], p["type"]) ==
                          (headline, None) else EXPLORATORY, **p)
            for p, c in zip(pending, corrected)]


CSV_COLUMNS = ("run", "baseline", "metric", "type", "n", "run_mean", "baseline_mean", "diff",
               "low", "high", "p_bootstrap", "p_randomisation", "p_corrected", "effect", "note",
               "family")
