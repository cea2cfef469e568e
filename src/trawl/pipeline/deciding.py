"""The evaluation's decision: which judgment set it rests on, and the figures it needs
(per-query headline scores, latency, index size, build time) gathered from the searched
runs and the indexes."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import replace
from typing import Any

from ..decision import Decision, Limits, SystemFigures, decide
from ..metrics import parse_metrics
from ..scores import score_runs
from ..silver import stemming_caution
from .searching import Searched
from .sets import LoadedSet
from .systems import System, stemming


def checked_limits(limits: Limits | None, first_metric: str) -> Limits:
    """The limits with the headline metric's canonical name, by default the first metric
    computed (an unknown metric is refused here, before any work)."""
    limits = limits or Limits()
    return replace(limits, headline=parse_metrics([limits.headline or first_metric])[0].name)


def deciding_set(loaded: Sequence[LoadedSet]) -> LoadedSet:
    """The set the decision rests on: the first judged by people, else the first
    not known to be silver, else the first (then the decision is provisional)."""
    return next((ld for ld in loaded if ld.origin == "human"),
                next((ld for ld in loaded if not ld.silver), loaded[0]))


def system_figures(s: System, indexes: Mapping[str, Any],
                   latency: Mapping[str, Mapping[str, Any]]) -> SystemFigures:
    """Latency of the system's run; size and build time of its index (a fusion: its
    parts' added up)."""
    parts = [s.name] if s.spec is not None else list(s.parts)
    infos = [indexes[p].info for p in parts if p in indexes]
    lat = latency.get(s.name, {})
    # a build that took vectors from the embedding cache did not pay for them: its time
    # says nothing about what building costs, so it counts as unknown
    seconds = [i.seconds if getattr(i, "reused", 0) == 0 else None for i in infos]
    return SystemFigures(
        s.name, lat.get("p50_ms"), lat.get("p95_ms"),
        sum(indexes[p].bytes for p in parts) if infos else None,
        sum(seconds) if infos and None not in seconds else None)


def evaluation_decision(systems: Sequence[System], loaded: Sequence[LoadedSet],
                        searched: Mapping[str, Searched], indexes: Mapping[str, Any],
                        limits: Limits, resamples: int, seed: int,
                        alpha: float) -> Decision | None:
    """The decision over every system on the deciding set; None with a single system."""
    if len(systems) < 2:
        return None
    ld = deciding_set(loaded)
    found = searched[ld.spec.name]
    runs = [found.runs[s.name] for s in systems]
    report = score_runs(ld.qrels, runs, [limits.headline])
    notes = [UNKNOWN_ORIGIN] if ld.origin == "unknown" else []
    if ld.silver and (caution := stemming_caution(stemming(systems))):
        notes.append(caution)
    figures = [system_figures(s, indexes, found.latency) for s in systems]
    if any(f.build_seconds is None for f in figures):
        # build times compare only when every index paid for its own embeddings
        figures = [replace(f, build_seconds=None) for f in figures]
        notes.append(BUILD_TIME_LEFT_OUT)
    return decide(figures,
                  report.values[:, :, 0], limits, judgment_set=ld.spec.label or ld.spec.name,
                  silver=ld.silver, resamples=resamples, seed=seed, alpha=alpha, notes=notes)


BUILD_TIME_LEFT_OUT = ("build time is left out of the costs: some indexes took their vectors "
                      "from the embedding cache, so their build times are not comparable")
UNKNOWN_ORIGIN = ("the judgments' origin is unknown (not declared as people's, no synthesis "
                  "provenance beside them): if a machine made them, treat this verdict as "
                  "provisional until people have judged a sample")
