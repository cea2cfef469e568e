"""Top-k selection in trec_eval's order (score descending, ties by item id descending).

Deterministic tie-breaking matters: catalogues hold duplicate texts (and Cranfield has
empty abstracts), whose scores tie exactly; which of them makes the cut must not depend
on index internals.
"""

from __future__ import annotations

import numpy as np


def id_ranks(ids: list[str]) -> np.ndarray:
    """``r[i]`` = position of ``ids[i]`` in ascending id order (a sortable stand-in for ids)."""
    order = sorted(range(len(ids)), key=ids.__getitem__)
    ranks = np.empty(len(ids), dtype=np.int64)
    ranks[order] = np.arange(len(ids))
    return ranks


def top_k(scores: np.ndarray, k: int, ranks: np.ndarray,
          candidates: np.ndarray | None = None) -> np.ndarray:
    """Positions of the best ``k`` scores, ordered by (score desc, id desc).

    ``candidates`` restricts the choice to some positions (e.g. what an ANN index found);
    ``scores`` then holds their scores, aligned with ``candidates``.
    """
    pos = np.arange(len(scores)) if candidates is None else np.asarray(candidates)
    scores = np.asarray(scores)
    if k < len(scores):
        kth = np.partition(scores, len(scores) - k)[len(scores) - k]
        keep = np.flatnonzero(scores >= kth)
        pos, scores = pos[keep], scores[keep]
    order = np.lexsort((-ranks[pos], -scores))[:k]
    return pos[order]
