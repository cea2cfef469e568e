"""Judgments, runs and a catalogue read together for one command, checked to belong together.

A run made for other queries, or from another catalogue, scores zero everywhere without
any file being malformed; the tables would look like a result. So the files are checked
against each other when read: a run must answer at least half of the judged queries and
list mostly items of the catalogue, unless a partial overlap is deliberate, and must
share at least one query with the judgments whatever is allowed.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

from .catalogue import Catalogue, load_catalogue
from .columns import listed_items, result_count
from .errors import UsageError
from .ids import examples
from .judgments import Qrels, read_qrels
from .runs import Run

# common practice, no source: below half of the judged queries answered, or with more
# than half of a run's items unknown to the catalogue, the files most likely do not match
PARTIAL_SHARE = 0.5


@dataclass(frozen=True)
class ScoringInputs:
    """Judgments, the runs scored against them and, optionally, their catalogue."""

    qrels: Qrels
    runs: tuple[Run, ...]
    catalogue: Catalogue | None


def read_scoring_inputs(qrels_path: str | Path, run_paths: Sequence[str | Path],
                        names: Sequence[str] = (), catalogue_path: str | Path | None = None,
                        allow_partial: bool = False) -> ScoringInputs:
    """Read qrels, runs (named by ``names`` when given) and a catalogue, and refuse files
    that do not belong together (see :func:`check_overlap`)."""
    from .scores import read_runs

    qrels = read_qrels(qrels_path)
    runs = read_runs(run_paths, names)
    catalogue = load_catalogue(catalogue_path) if catalogue_path is not None else None
    check_overlap(qrels, qrels_path, runs, run_paths, catalogue, allow_partial)
    return ScoringInputs(qrels, tuple(runs), catalogue)


def check_overlap(qrels: Qrels, qrels_path: str | Path, runs: Sequence[Run],
                  run_paths: Sequence[str | Path], catalogue: Catalogue | None = None,
                  allow_partial: bool = False) -> None:
    """Raise a UsageError naming both files when a run shares no query with the qrels,
    or (unless ``allow_partial``) answers under half of them or lists mostly items the
    catalogue does not hold."""
    for run, path in zip(runs, run_paths):
        shared = [q for q in qrels if result_count(run.results, q)]
        answered = [q for q in run.results if result_count(run.results, q)]
        if not answered:
            raise UsageError(
                f"{path} holds no results: nothing was found for any query, so there is "
                f"nothing to score against the {_queries(len(qrels))} judged in "
                f"{qrels_path}; check the run was made from these queries and their "
                "catalogue")
        if not shared:
            raise UsageError(
                f"{path} and {qrels_path} share no query: the run answers "
                f"{_queries(len(answered))} ({examples(answered)}), the qrels "
                f"judge {_queries(len(qrels))} ({examples(list(qrels))}); score a run made "
                "from the queries these qrels judge")
        if not allow_partial and len(shared) < PARTIAL_SHARE * len(qrels):
            raise UsageError(
                f"{path} answers {len(shared)} of the {_queries(len(qrels))} judged in "
                f"{qrels_path} ({_pct(len(shared), len(qrels))}); the others would score 0. "
                "If the partial overlap is deliberate, allow it")
        if catalogue is not None and not allow_partial:
            _check_items(run, path, catalogue)


def _check_items(run: Run, path: str | Path, catalogue: Catalogue) -> None:
    listed = listed_items(run.results)
    outside = sorted(listed - catalogue.by_id.keys())
    if listed and len(outside) > PARTIAL_SHARE * len(listed):
        raise UsageError(
            f"{path}: {len(outside)} of its {len(listed)} distinct items "
            f"({_pct(len(outside), len(listed))}) are not in {catalogue.path}, e.g. "
            f"{examples(outside)}; was the run made from another catalogue? If the partial "
            "overlap is deliberate, allow it")


def _queries(n: int) -> str:
    return f"{n} {'query' if n == 1 else 'queries'}"


def _pct(part: int, whole: int) -> str:
    return f"{100 * part / max(whole, 1):.0f}%"


def read_agreement_inputs(qrels_a: str | Path, qrels_b: str | Path,
                          run_paths: Sequence[str | Path], names: Sequence[str] = (),
                          allow_partial: bool = False) -> tuple[Qrels, Qrels, tuple[Run, ...]]:
    """Two judgment sets and the runs ranked under both; the runs must belong with each
    set (the two sets need not share queries: each ranks the runs over its own)."""
    first = read_scoring_inputs(qrels_a, run_paths, names, allow_partial=allow_partial)
    second = read_qrels(qrels_b)
    check_overlap(second, qrels_b, first.runs, run_paths, allow_partial=allow_partial)
    return first.qrels, second, first.runs
