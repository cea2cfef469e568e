"""Lexical overlap between a query and its source item.

The share of the query's content words whose stem occurs in the item's title or text.
Human queries share far fewer words with their relevant item than text copied from it
does, and a silver set with too much overlap hands the win to lexical matching; this
figure is how a user (and the synthesiser) sees that.
"""

from __future__ import annotations

import random
from collections.abc import Collection, Sequence
from dataclasses import dataclass

from .text import content_words, stem


def overlap(query: str, item_stems: Collection[str]) -> float | None:
    """Share of the query's content words found in the item; None for no content words."""
    qw = content_words(query)
    if not qw:
        return None
    return sum(1 for w in qw if stem(w) in item_stems) / len(qw)


@dataclass(frozen=True)
class OverlapProfile:
    """How much of its source item's wording a query should reuse.

    ``quantiles`` are evenly spaced quantiles (0%, ..., 100%) of the target overlap; each
    query slot draws a target from them and keeps the candidate closest to it. Queries
    above ``ceiling`` are dropped: they copy too much of the item to say anything about
    how people, who use their own words, would fare.
    """

    quantiles: tuple[float, ...]
    ceiling: float
    source: str = "default"

    def sample(self, rng: random.Random) -> float:
        """A target overlap drawn from the profile (inverse CDF, linear between quantiles)."""
        q = self.quantiles
        if len(q) == 1:
            return q[0]
        x = rng.random() * (len(q) - 1)
        k = min(int(x), len(q) - 2)
        return q[k] + (x - k) * (q[k + 1] - q[k])

    def as_dict(self) -> dict[str, object]:
        return {"quantiles": [round(v, 4) for v in self.quantiles], "ceiling": self.ceiling,
                "source": self.source}


def profile_from(overlaps: Sequence[float], source: str, points: int = 11) -> OverlapProfile:
    """A profile whose targets follow ``overlaps`` and whose ceiling is their 90th
    percentile (at least 0.5, so a few odd queries cannot shut everything out)."""
    vals = sorted(overlaps)
    if not vals:
        raise ValueError("no overlap values to build a profile from")
    qs = tuple(_quantile(vals, k / (points - 1)) for k in range(points))
    return OverlapProfile(qs, max(0.5, round(_quantile(vals, 0.9), 4)), source)


def _quantile(vals: Sequence[float], p: float) -> float:
    x = p * (len(vals) - 1)
    k = int(x)
    if k + 1 >= len(vals):
        return vals[-1]
    return vals[k] + (x - k) * (vals[k + 1] - vals[k])
