"""Score runs against qrels: per query, overall and per destination type.

Which type a query counts toward is ``destinations.TYPE_RULE``; the overall mean counts
every query once.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from .catalogue import Catalogue
from .columns import listed_items, result_count
from .destinations import TYPE_RULE, query_types, type_members
from .errors import UsageError
from .ids import examples
from .lookalike import near_miss_lines
from .judgments import Qrels
from .metrics import DEFAULT_METRICS, Metric, parse_metrics, score_matrix
from .runs import Run, read_run

if TYPE_CHECKING:  # pandas costs a second of start-up; the DataFrame views import it
    import pandas as pd


def count(n: int, singular: str, plural: str | None = None) -> str:
    """``"1 query"``, ``"3 queries"``."""
    return f"{n} {singular if n == 1 else plural or singular + 's'}"


def run_warnings(qrels: Qrels, run: Run, catalogue: Catalogue | None) -> list[str]:
    """What a reader of the scores must know about one run's coverage."""
    out = []
    missing = [q for q in qrels if not result_count(run.results, q)]
    if missing:
        out.append(f"run {run.name!r}: queries without results, scored 0: {len(missing)} of "
                   f"{len(qrels)}: {examples(missing)}")
    extra = [q for q in run.results if q not in qrels]
    if extra:
        out.append(f"run {run.name!r}: queries not in the qrels, ignored: {len(extra)}: "
                   f"{examples(extra)}")
        near = near_miss_lines(extra, missing)
        if near:
            out.append(f"run {run.name!r}: query ids that look like qrels query ids but "
                       f"differ, so they are not matched: {len(near)}: {'; '.join(near[:5])}")
    if catalogue is not None:
        by_id = catalogue.by_id
        listed = listed_items(run.results)
        unknown = [] if listed <= by_id.keys() else [
            f"{q}/{item}" for q, pairs in run.results.items()
            for item, _ in pairs if item not in by_id]
        if unknown:
            out.append(f"run {run.name!r}: results naming items not in the catalogue: "
                       f"{len(unknown)} (query/item): {examples(unknown)}")
            near = near_miss_lines(dict.fromkeys(item for pairs in run.results.values()
                                                 for item, _ in pairs if item not in by_id),
                                   by_id)
            if near:
                out.append(f"run {run.name!r}: items that look like catalogue items but "
                           f"differ, so they are not matched: {len(near)}: "
                           f"{'; '.join(near[:5])}")
    return out


def qrels_warnings(qrels: Qrels) -> list[str]:
    empty = [q for q, judged in qrels.items() if max(judged.values()) < 1]
    if not empty:
        return []
    return [f"queries with no item graded >= 1: {len(empty)}; they score 0 on every metric "
            f"and count in the means, as TREC evaluation counts them: {examples(empty)}"]


def check_run_names(runs: Sequence[Run]) -> None:
    seen: set[str] = set()
    for r in runs:
        if r.name in seen:
            raise UsageError(f"two runs are named {r.name!r} (the same run file given "
                             "twice?); give each run once, or a name of its own (one name "
                             "per run file, in their order)")
        seen.add(r.name)


def read_runs(paths: Sequence[str | Path], names: Sequence[str] = ()) -> list[Run]:
    """Read runs, named by ``names`` (one per path, in order) when given, else by their
    tag unless tags repeat, then by file name (or path)."""
    if names:
        if len(names) != len(paths):
            raise UsageError(f"{len(names)} run name(s) given for {len(paths)} run file(s); "
                             "give one name per run, in the order of the files")
        dupes = sorted({n for n in names if list(names).count(n) > 1})
        if dupes:
            raise UsageError(f"run name {dupes[0]!r} is given twice; runs need names of "
                             "their own")
        return [read_run(p, name=n) for p, n in zip(paths, names)]
    runs = [read_run(p) for p in paths]
    if len({r.name for r in runs}) == len(runs):
        return runs
    stems = [Path(p).stem for p in paths]
    names = stems if len(set(stems)) == len(stems) else [str(p) for p in paths]
    return [Run(n, r.results) for n, r in zip(names, runs)]


@dataclass(frozen=True, eq=False)
class ScoreReport:
    """Scores of several runs on one set of qrels.

    ``values[r, q, m]`` is run r's score on qrels query q for metric m. ``types`` maps
    a query to its destination types (empty without a catalogue). ``intervals`` holds
    bootstrap (low, high) bounds of every mean when they were asked for; a group of
    fewer than ``stats.MIN_QUERIES`` queries has none, and its rows say why (``note``).
    """

    metrics: tuple[str, ...]
    runs: tuple[str, ...]
    qids: tuple[str, ...]
    values: np.ndarray
    types: Mapping[str, tuple[str, ...]]
    warnings: tuple[str, ...]
    intervals: Mapping[tuple[str, str, str | None], tuple[float, float]] | None = None

    def groups(self) -> dict[str | None, np.ndarray]:
        """Query rows per group: ``None`` for all queries, then each destination type."""
        out: dict[str | None, np.ndarray] = {None: np.arange(len(self.qids))}
        out.update(type_members(self.qids, self.types))
        return out

    def means(self, rows: np.ndarray | None = None) -> np.ndarray:
        """Mean per run and metric over the given query rows (default: all)."""
        v = self.values if rows is None else self.values[:, rows, :]
        return v.mean(axis=1) if v.shape[1] else np.full(v.shape[::2], np.nan)

    def score_rows(self) -> list[dict[str, Any]]:
        """One row per run, metric and group: {run, metric, type, n, mean, low, high,
        note}; ``note`` says why an interval asked for is missing (else None)."""
        from .stats import too_few

        out = []
        for group, rows in self.groups().items():
            means = self.means(rows)
            note = too_few(len(rows)) if self.intervals is not None else None
            for r, run in enumerate(self.runs):
                for m, metric in enumerate(self.metrics):
                    low, high = (self.intervals or {}).get((run, metric, group), (None, None))
                    out.append({"run": run, "metric": metric, "type": group, "n": len(rows),
                                "mean": float(means[r, m]), "low": low, "high": high,
                                "note": note})
        return out

    def per_query_rows(self) -> list[dict[str, Any]]:
        out = []
        for r, run in enumerate(self.runs):
            for q, qid in enumerate(self.qids):
                row: dict[str, Any] = {"run": run, "qid": qid,
                                       "types": list(self.types.get(qid, ()))}
                row.update(zip(self.metrics, self.values[r, q].tolist()))
                out.append(row)
        return out

    @property
    def per_query(self) -> pd.DataFrame:
        """Long table: one row per run and query; columns run, qid, types, metrics."""
        import pandas as pd

        frame = pd.DataFrame(self.per_query_rows(),
                             columns=["run", "qid", "types", *self.metrics])
        frame["types"] = frame["types"].map(" ".join)
        return frame

    @property
    def overall(self) -> pd.DataFrame:
        """Mean per run (rows) and metric (columns) over every qrels query."""
        import pandas as pd

        return pd.DataFrame(self.means(), index=pd.Index(self.runs, name="run"),
                            columns=list(self.metrics))

    @property
    def per_type(self) -> pd.DataFrame:
        """Means per (run, type) with a ``queries`` column; empty without a catalogue."""
        import pandas as pd

        rows = [{"run": s["run"], "type": s["type"], "queries": s["n"],
                 "metric": s["metric"], "mean": s["mean"]}
                for s in self.score_rows() if s["type"] is not None]
        if not rows:
            return pd.DataFrame(columns=["queries", *self.metrics],
                                index=pd.MultiIndex.from_tuples([], names=["run", "type"]))
        wide = pd.DataFrame(rows).pivot_table(index=["run", "type", "queries"],
                                              columns="metric", values="mean", sort=False)
        return wide.reset_index("queries")[["queries", *self.metrics]].rename_axis(
            columns=None)

    def as_dict(self) -> dict[str, Any]:
        return {
            "metrics": list(self.metrics),
            "runs": list(self.runs),
            "queries": len(self.qids),
            "type_rule": TYPE_RULE if self.types else None,
            "scores": self.score_rows(),
            "per_query": self.per_query_rows(),
            "warnings": list(self.warnings),
        }


def score_runs(qrels: Qrels, runs: Sequence[Run] | Run,
               metrics: Iterable[str | Metric] = DEFAULT_METRICS,
               catalogue: Catalogue | None = None, resamples: int = 0, seed: int = 0,
               alpha: float = 0.05) -> ScoreReport:
    """Score every run on every qrels query; per-type means need the catalogue.

    With ``resamples > 0`` every mean also gets a percentile bootstrap interval at
    level ``1 - alpha`` (the same resamples of queries for every run and metric),
    except in groups of fewer than ``stats.MIN_QUERIES`` queries, which are warned about.
    """
    runs = [runs] if isinstance(runs, Run) else list(runs)
    if not runs:
        raise UsageError("no runs to score; give at least one run file")
    check_run_names(runs)
    ms = parse_metrics(metrics)
    warnings = qrels_warnings(qrels)
    types: dict[str, tuple[str, ...]] = {}
    if catalogue is not None:
        types, type_warnings = query_types(qrels, catalogue)
        warnings += type_warnings
    for run in runs:
        warnings += run_warnings(qrels, run, catalogue)
    values = np.stack([score_matrix(qrels, run, ms) for run in runs])
    report = ScoreReport(tuple(m.name for m in ms), tuple(r.name for r in runs),
                         tuple(qrels), values, types, tuple(warnings))
    if resamples <= 0:
        return report
    from .stats import MIN_QUERIES, TOO_FEW, bootstrap_intervals

    intervals = {}
    for group, rows in report.groups().items():
        if len(rows) < MIN_QUERIES:
            where = "all queries" if group is None else f"type {group!r}"
            warnings.append(f"{where}: only {count(len(rows), 'query', 'queries')} (fewer "
                            f"than {MIN_QUERIES}): no bootstrap interval ({TOO_FEW})")
            continue
        flat = values[:, rows, :].transpose(1, 0, 2).reshape(len(rows), -1)
        bounds = bootstrap_intervals(flat, resamples, seed, alpha)
        for j, (low, high) in enumerate(bounds):
            r, m = divmod(j, len(ms))
            intervals[(report.runs[r], report.metrics[m], group)] = (low, high)
    return ScoreReport(report.metrics, report.runs, report.qids, values, types,
                       tuple(warnings), intervals)
