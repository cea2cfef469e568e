"""Consensus neighbours: other items a query about an item is likely relevant to.

A silver query is judged against its source item, yet people judge many items relevant
to one need (the human sets we measured list six to eight per query). Judging only the
source turns evaluation into finding one known item, which exact-word matching does
best, and it gives no credit to a system that returns the source's close relatives.
So an item counts as a neighbour of the source (judged at the related grade) when every
encoder in ``specs`` ranks it among the source's ``depth`` nearest items, searching
with the source's own title and text. The default pairs a dense and a lexical encoder:
an item both agree on is near in meaning *and* in wording, and neither family alone
decides what counts as relevant.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from pathlib import Path

import numpy as np

from ..catalogue import Catalogue
from ..errors import UsageError

NEIGHBOUR_SPECS = ("minilm", "bm25")
NEIGHBOUR_DEPTH = 10  # at most; see neighbour_depth
CATALOGUE_SHARE = 0.025  # ... and at most this share of the catalogue, at least 1
MAX_CHARS = 2000  # longer text adds little to either encoder and slows lexical search


def neighbour_depth(n_items: int) -> int:
    """How far to look: NEIGHBOUR_DEPTH, but no more than CATALOGUE_SHARE of a small
    catalogue (in a 20-item catalogue the top 10 would make half of it relevant)."""
    return max(1, min(NEIGHBOUR_DEPTH, round(n_items * CATALOGUE_SHARE)))


def consensus_neighbours(catalogue: Catalogue, sources: Iterable[str],
                         specs: Sequence[str] = NEIGHBOUR_SPECS, depth: int | None = None,
                         cache_dir: str | Path | None = None, quiet: bool = True
                         ) -> dict[str, tuple[str, ...]]:
    """For each source id, the items (in the first encoder's order) that every encoder
    in ``specs`` ranks in the source's top ``depth`` other items (default:
    ``neighbour_depth`` of the catalogue's size)."""
    if depth is None:
        depth = neighbour_depth(len(catalogue))
    if depth < 1:
        raise UsageError(f"neighbour depth {depth} must be >= 1")
    ids = sorted(set(sources))
    if not ids or not specs:
        return {i: () for i in ids}
    tops = [_nearest(catalogue, spec, ids, depth, cache_dir, quiet) for spec in specs]
    out = {}
    for i in ids:
        agreed = set.intersection(*(set(t[i]) for t in tops))
        out[i] = tuple(d for d in tops[0][i] if d in agreed)
    return out


def _nearest(catalogue: Catalogue, spec: str, ids: list[str], depth: int,
             cache_dir: str | Path | None, quiet: bool) -> dict[str, list[str]]:
    """Each source's ``depth`` nearest other items by ``spec``. A dense index already
    holds every item's vector, so its neighbours come from those (no re-encoding: on a
    busy two-core machine, encoding 220 texts again took minutes); a lexical one is
    searched with the source's title and text."""
    from ..index.manifest import VECTORS
    from ..index.search import cached_index

    index = cached_index(catalogue, spec, cache_dir, quiet)
    if (index.path / VECTORS).is_file():
        vectors = np.load(index.path / VECTORS, allow_pickle=False)
        row = {item: k for k, item in enumerate(index.ids)}
        out = {}
        for i in ids:
            sims = vectors @ vectors[row[i]]
            sims[row[i]] = -np.inf
            top = np.argsort(-sims, kind="stable")[:depth]
            out[i] = [index.ids[k] for k in top]
        return out
    queries = {i: _text(catalogue, i) for i in ids}
    run = index.search(queries, min(depth + 1, len(catalogue)), quiet=quiet)
    # a score of 0 or less is no match
    return {i: [d for d, sc in run.results.get(i, ()) if d != i and sc > 0][:depth]
            for i in ids}


def _text(catalogue: Catalogue, item_id: str) -> str:
    it = catalogue.by_id[item_id]
    text = f"{it.title}\n{it.text}".strip()
    return text[:MAX_CHARS] or item_id
