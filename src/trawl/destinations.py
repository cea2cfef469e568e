"""The one rule for a query's destination type, shared by scores, comparisons, misses
and review sheets.

A query counts toward a destination type through the items it most wants: the
catalogue types of its best-graded items (grade 2 in silver qrels). When those items
have several types the query counts once toward each, so per-type query counts can add
up to more than the number of queries; the overall mean counts every query once.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from .catalogue import Catalogue
from .ids import examples
from .lookalike import describe, groups, near_miss_lines
from .judgments import Qrels

TYPE_RULE = ("a query counts toward the destination type of its best-graded relevant "
             "items; a query whose best items have several types counts toward each")
NO_TYPE = "-"  # the stratum of a query with no relevant judged item


def query_types(qrels: Qrels, catalogue: Catalogue
                ) -> tuple[dict[str, tuple[str, ...]], list[str]]:
    """Destination types per query (see module doc) and warnings about unknown items.

    Queries with no item graded >= 1, or whose best items are all missing from the
    catalogue, get no type: they count overall but in no per-type row.
    """
    by_id = catalogue.by_id
    types: dict[str, tuple[str, ...]] = {}
    unknown: dict[str, None] = {}
    untyped: list[str] = []
    for qid, judged in qrels.items():
        top = max(judged.values(), default=0)
        if top < 1:
            continue
        found = set()
        for item, grade in judged.items():
            if item not in by_id:
                unknown[item] = None
            elif grade == top:
                found.add(by_id[item].type)
        if found:
            types[qid] = tuple(sorted(found))
        else:
            untyped.append(qid)
    warnings = []
    if unknown:
        warnings.append(f"judged items not in the catalogue {catalogue.path}: "
                        f"{len(unknown)}: {examples(list(unknown))}")
        near = near_miss_lines(unknown, by_id)
        if near:
            warnings.append(f"judged items that look like catalogue items but differ, so "
                            f"they are not matched: {len(near)}: {'; '.join(near[:5])}")
    warnings += [f"destination types that look alike but differ, counted apart: "
                 f"{describe(g)}" for g in groups(catalogue.type_counts())]
    if untyped:
        warnings.append(f"queries whose best-graded items are all missing from the "
                        f"catalogue (so in no destination type): {len(untyped)}: "
                        f"{examples(untyped)}")
    return types, warnings


def type_tally(types: Mapping[str, tuple[str, ...]], queries: int) -> str:
    """How the per-type query counts add up to ``queries``, counted from the assignment:
    queries toward more than one type count again in each, untyped ones in none."""
    extra = sum(len(t) - 1 for t in types.values())
    several = sum(len(t) > 1 for t in types.values())
    if extra == 0 and len(types) == queries:
        return f"the per-type rows count each of the {queries} judged queries once"
    return (f"the per-type rows count {len(types) + extra} queries: {len(types)} of the "
            f"{queries} judged queries have a type, {several} of them "
            f"{'counts' if several == 1 else 'count'} toward more than one (+{extra}), and "
            f"{queries - len(types)} toward none")


def type_members(qids: Sequence[str], types: Mapping[str, tuple[str, ...]]
                 ) -> dict[str, np.ndarray]:
    """Row indices of the queries counting toward each type, types in name order."""
    rows: dict[str, list[int]] = {}
    for i, qid in enumerate(qids):
        for t in types.get(qid, ()):
            rows.setdefault(t, []).append(i)
    return {t: np.asarray(rows[t], dtype=np.int64) for t in sorted(rows)}


def stratum(types: Sequence[str]) -> str:
    """One label per query for stratified sampling: its types joined by '+' (a query
    whose best items have two types is its own stratum), or ``NO_TYPE``."""
    return "+".join(types) or NO_TYPE
