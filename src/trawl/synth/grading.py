"""Silver judgments: who counts as relevant to a synthesised query, and how much.

The item a query was made from is judged ``source_grade`` (2); the items it lists in
``related`` (serving the same intent) ``related_grade`` (1; 0 leaves them unjudged).
When several items yield the same or nearly the same query, the queries are merged and
every source is judged, since a person typing it would be served by any of them.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from ..catalogue import Catalogue
from ..judgments import Qrels
from .text import content_words, stem

SOURCE_GRADE = 2
RELATED_GRADE = 1
NEAR_DUPLICATE = 0.8  # Jaccard similarity of content stems; common practice, no source


@dataclass(frozen=True)
class Draft:
    """A synthesised query before merging: its text and what made it."""

    text: str
    source: str
    style: str
    generator: str
    overlap: float
    target: float = 0.0  # the overlap the profile asked for


@dataclass(frozen=True)
class Merged:
    """One final query and every draft merged into it (first draft first)."""

    text: str
    drafts: tuple[Draft, ...]

    @property
    def sources(self) -> tuple[str, ...]:
        return tuple(dict.fromkeys(d.source for d in self.drafts))


def query_key(text: str) -> frozenset[str]:
    """What near-duplicate queries share: their content words' stems."""
    return frozenset(stem(w) for w in content_words(text))


def near_duplicate(a: frozenset[str], b: frozenset[str],
                   threshold: float = NEAR_DUPLICATE) -> bool:
    """Whether two query keys have Jaccard similarity of at least ``threshold``."""
    inter = len(a & b)
    return bool(inter) and inter / len(a | b) >= threshold


def merge_near_duplicates(drafts: Sequence[Draft], threshold: float = NEAR_DUPLICATE
                          ) -> list[Merged]:
    """Group drafts whose content stems have Jaccard similarity >= ``threshold``.

    Each draft joins the first earlier group it is that close to; the group keeps the
    first draft's text. Order follows the first draft of each group.
    """
    groups: list[list[Draft]] = []
    keys: list[frozenset[str]] = []
    by_stem: dict[str, list[int]] = {}
    for d in drafts:
        k = query_key(d.text)
        target = None
        for g in sorted({g for s in k for g in by_stem.get(s, ())}):
            if near_duplicate(k, keys[g], threshold):
                target = g
                break
        if target is None:
            if not k and d.text in (gr[0].text for gr in groups):
                target = next(i for i, gr in enumerate(groups) if gr[0].text == d.text)
            else:
                target = len(groups)
                groups.append([])
                keys.append(k)
                for s in k:
                    by_stem.setdefault(s, []).append(target)
        groups[target].append(d)
    return [Merged(g[0].text, tuple(g)) for g in groups]


def silver_qrels(merged: Mapping[str, Merged], catalogue: Catalogue,
                 source_grade: int = SOURCE_GRADE, related_grade: int = RELATED_GRADE,
                 neighbours: Mapping[str, Sequence[str]] | None = None) -> Qrels:
    """Graded judgments per query id: sources at ``source_grade``, their related items
    and ``neighbours`` (source id -> item ids) at ``related_grade`` (never lowering a
    grade already given)."""
    out: Qrels = {}
    for qid, m in merged.items():
        grades: dict[str, int] = {}
        for src in m.sources:
            grades[src] = source_grade
        if related_grade > 0:
            for src in m.sources:
                for rel in (*catalogue.by_id[src].related, *(neighbours or {}).get(src, ())):
                    if grades.get(rel, 0) < related_grade:
                        grades[rel] = related_grade
        out[qid] = grades
    return out
