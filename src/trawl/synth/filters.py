"""Round-trip check: keep a query only if a checker retrieves one of its sources.

A query that no reasonable system can bring back to its source is often a bad query
(the wording drifted off topic). The check is optional and off by default: a single
checker favours systems like itself, so when used it should fuse several different
encoders (``check_with=("minilm", "bm25")``) and look deep (top 20).
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from ..catalogue import Catalogue
from ..errors import UsageError
from .grading import Merged


def round_trip_keep(catalogue: Catalogue, merged: Sequence[Merged], specs: Sequence[str],
                    depth: int, quiet: bool = True, cache_dir: str | Path | None = None
                    ) -> list[bool]:
    """For each merged query, whether a source is in the (fused) checkers' top ``depth``."""
    from ..index import retrieve
    from ..fusion import reciprocal_rank_fusion

    if depth < 1:
        raise UsageError(f"check depth {depth} must be >= 1")
    if not merged:
        return []
    queries = {f"c{k}": m.text for k, m in enumerate(merged)}
    runs = [retrieve(catalogue, spec, queries, k=depth, cache_dir=cache_dir, quiet=quiet)
            for spec in specs]
    run = runs[0] if len(runs) == 1 else reciprocal_rank_fusion(runs, depth=depth)
    keep = []
    for k, m in enumerate(merged):
        top = {item for item, _ in run.results.get(f"c{k}", ())[:depth]}
        keep.append(bool(top & set(m.sources)))
    return keep
