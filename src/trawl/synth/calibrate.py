"""Calibrate the overlap profile to a sample of real, unjudged queries (a search log).

Real queries have no judged item, so each is paired with the item a neutral checker
ranks first: Reciprocal Rank Fusion of a dense and a lexical encoder. Its overlap with
that item is an estimate, biased upwards (a retriever prefers items that share the
query's words), so the synthesised set errs on the easy side of the real one.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

from ..catalogue import Catalogue
from ..errors import UsageError
from .corpus import build_corpus
from .overlap import OverlapProfile, overlap, profile_from

CALIBRATION_SPECS = ("minilm", "bm25")
MIN_QUERIES = 10  # fewer says little about a distribution; common practice, no source


def calibrate_profile(catalogue: Catalogue, queries: Mapping[str, str], source: str = "",
                      specs: Sequence[str] = CALIBRATION_SPECS, quiet: bool = True
                      ) -> OverlapProfile:
    """An overlap profile matching ``queries`` against their likeliest items."""
    from ..index import retrieve
    from ..fusion import reciprocal_rank_fusion

    if len(queries) < MIN_QUERIES:
        raise UsageError(f"calibration needs at least {MIN_QUERIES} real queries, got "
                         f"{len(queries)}{' in ' + source if source else ''}")
    runs = [retrieve(catalogue, s, queries, k=10, quiet=quiet) for s in specs]
    run = runs[0] if len(runs) == 1 else reciprocal_rank_fusion(runs)
    corpus = build_corpus(catalogue)
    values = []
    for qid, text in queries.items():
        ranked = run.results.get(qid, ())
        if not ranked:
            continue
        ov = overlap(text, corpus.words[ranked[0][0]].stems)
        if ov is not None:
            values.append(ov)
    if len(values) < MIN_QUERIES:
        raise UsageError(f"calibration: only {len(values)} queries had content words and a "
                         f"match; need {MIN_QUERIES}")
    label = f"calibrated on {len(values)} queries" + (f" from {source}" if source else "")
    return profile_from(values, label)
