"""Reciprocal Rank Fusion of runs (Cormack, Clarke & Buettcher, 2009).

``score(d) = sum over runs r of 1 / (k + rank_r(d))`` with ranks starting at 1; an item
missing from a run gets nothing from it. Fusing a dense and a lexical run is the usual
way to build a hybrid without calibrating their scores against each other.
"""

from __future__ import annotations

from collections.abc import Sequence

from .errors import UsageError
from .runs import Run, check_run_name, rank_order

RRF_K = 60  # the constant used in the original paper


def reciprocal_rank_fusion(runs: Sequence[Run], k: int = RRF_K, depth: int | None = None,
                           name: str | None = None) -> Run:
    """Fuse ``runs`` by RRF; ``depth`` limits both the ranks read from each run and the
    fused list (default: every rank read, fused list as long as the longest input)."""
    if len(runs) < 2:
        raise UsageError(f"fusion needs at least 2 runs, got {len(runs)}")
    if k < 0:
        raise UsageError(f"RRF k={k} must be >= 0")
    if depth is not None and depth < 1:
        raise UsageError(f"depth={depth} must be >= 1")
    if name is not None:
        check_run_name(name)
    qids = list(dict.fromkeys(q for run in runs for q in run.results))
    fused: dict[str, tuple[tuple[str, float], ...]] = {}
    for qid in qids:
        terms: dict[str, list[int]] = {}
        longest = 0
        for run in runs:
            ranked = run.results.get(qid, ())[:depth]
            longest = max(longest, len(ranked))
            for rank, (item, _) in enumerate(ranked, start=1):
                terms.setdefault(item, []).append(rank)
        # summing in a fixed order (best rank first) gives equal totals for equal rank
        # sets, so ties stay exact ties and are broken by item id like everywhere else
        scores = {item: sum(1.0 / (k + r) for r in sorted(ranks)) for item, ranks in terms.items()}
        fused[qid] = rank_order(scores.items())[:depth or longest]
    return Run(name or "rrf-" + "+".join(run.name for run in runs), fused)
