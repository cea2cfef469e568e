"""Where a run fails, by destination type: the per-type miss table and the worst queries.

Counts say *how often* a type of destination is missed; the type of what came first
instead says *why* (screen queries drowned by articles call for a different fix than
screen queries answered by the wrong screen), and the worst queries let a person see
the failures themselves.

Definitions (per query, types assigned as in ``scores``):

- relevant: graded >= 1; first rank: 1-based rank of the first relevant item, or none;
- hit@1 / hit@k: the first rank is 1 / at most k; misses: no relevant item in the top k;
- lost to: for queries whose rank-1 item is not relevant, the type of that item
  (``(no results)`` when the run has none for the query, ``(unknown item)`` when the item
  is not in the catalogue), as a share of those queries;
- wanted: one definition for the counts and the worst queries: a query wants its
  relevant items, and its rank is the first rank of any of them (so a query counted as a
  hit at k never shows its wanted item below k);
- worst queries: queries whose first relevant item is not at rank 1, lowest first (not
  retrieved at all counts as lowest); the item shown is that first relevant item, or,
  when none was retrieved, the query's best-graded item of the row's type. A query whose
  best items have several types is listed once, under the first of them by name.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from .catalogue import Catalogue, Item
from .destinations import TYPE_RULE, query_types
from .errors import UsageError
from .judgments import Qrels
from .privacy import scrub_texts
from .runs import Run
from .scores import run_warnings

NO_RESULTS = "(no results)"
UNKNOWN_ITEM = "(unknown item)"
SNIPPET_CHARS = 160


@dataclass(frozen=True)
class ItemRef:
    """An item as a person needs to see it in a table."""

    id: str
    type: str
    title: str
    snippet: str

    def as_dict(self) -> dict[str, str]:
        return {"id": self.id, "type": self.type, "title": self.title, "snippet": self.snippet}


@dataclass(frozen=True)
class MissRow:
    type: str
    queries: int
    hit_at_1: float
    hit_at_k: float
    misses: int
    median_rank: float | None  # None when most queries retrieve no relevant item at all
    not_found: int  # queries with no relevant item anywhere in the run
    lost: int  # queries whose rank-1 item is not relevant
    lost_to: Mapping[str, float]  # type of the rank-1 item -> share of ``lost``

    def as_dict(self) -> dict[str, Any]:
        return {"type": self.type, "queries": self.queries, "hit_at_1": self.hit_at_1,
                "hit_at_k": self.hit_at_k, "misses": self.misses,
                "median_rank": self.median_rank, "not_found": self.not_found,
                "lost": self.lost, "lost_to": dict(self.lost_to)}


@dataclass(frozen=True)
class WorstQuery:
    type: str
    qid: str
    query: str
    rank: int | None  # rank of the wanted item; None when not retrieved
    wanted: ItemRef
    winner: ItemRef | None  # the rank-1 item; None when nothing was retrieved

    def as_dict(self) -> dict[str, Any]:
        return {"type": self.type, "qid": self.qid, "query": self.query, "rank": self.rank,
                "wanted": self.wanted.as_dict(),
                "winner": None if self.winner is None else self.winner.as_dict()}


@dataclass(frozen=True)
class MissReport:
    run: str
    k: int
    depth: int  # longest ranking in the run: "not retrieved" means not in this many
    rows: tuple[MissRow, ...]
    worst: tuple[WorstQuery, ...]
    headline: str
    warnings: tuple[str, ...]
    scrubbed: Mapping[str, int] | None = None  # kind -> count; None when not scrubbed

    def as_dict(self) -> dict[str, Any]:
        out = {"run": self.run, "k": self.k, "type_rule": TYPE_RULE,
               "rows": [r.as_dict() for r in self.rows], "headline": self.headline,
               "worst": {"run": self.run, "depth": self.depth,
                         "queries": [w.as_dict() for w in self.worst]},
               "warnings": list(self.warnings)}
        if self.scrubbed is not None:
            out["scrubbed"] = dict(self.scrubbed)
        return out


def item_ref(item: Item) -> ItemRef:
    text = " ".join(item.text.split())
    snippet = text if len(text) <= SNIPPET_CHARS else text[:SNIPPET_CHARS - 1].rstrip() + "…"
    return ItemRef(item.id, item.type, item.title, snippet)


def _unknown_ref(item_id: str) -> ItemRef:
    return ItemRef(item_id, UNKNOWN_ITEM, "", "")


def _median_rank(ranks: list[float]) -> float | None:
    m = float(np.median(np.asarray(ranks, dtype=np.float64)))
    return None if np.isinf(m) else m


def headline(run: str, rows: tuple[MissRow, ...]) -> str:
    """The largest confusion between two different types, in words."""
    best = None
    for r in rows:
        for t, share in r.lost_to.items():
            if t == r.type or t in (NO_RESULTS, UNKNOWN_ITEM):
                continue
            count = round(share * r.lost)
            key = (count, share, r.type, t)
            if best is None or key[:2] > best[:2]:
                best = key
    if best is None:
        return f"run {run}: no query lost rank 1 to an item of another type"
    count, share, wanted, winner = best
    row = next(r for r in rows if r.type == wanted)
    return (f"{wanted} queries lose to {winner} items {share:.0%} of the time their rank-1 "
            f"item is wrong ({count} of {row.lost}; run {run})")


def _wanted(judged: Mapping[str, int], t: str, ranking, first: int | None,
            by_id: Mapping[str, Item]) -> ItemRef:
    """The item a worst-query line names: the first relevant item retrieved (at rank
    ``first``), else the best-graded item of type ``t`` (the lowest id among ties)."""
    if first is not None:
        found = ranking[first - 1][0]
        return item_ref(by_id[found]) if found in by_id else _unknown_ref(found)
    top = max(g for i, g in judged.items() if i in by_id and by_id[i].type == t)
    return item_ref(by_id[min(i for i, g in judged.items()
                              if g == top and i in by_id and by_id[i].type == t)])


def miss_table(qrels: Qrels, run: Run, catalogue: Catalogue, k: int = 10, worst: int = 5,
               queries: Mapping[str, str] | None = None,
               scrub_queries: bool = False) -> MissReport:
    """The per-destination-type error table of one run, with ``worst`` queries per type.

    ``queries`` (qid -> text) lets the worst-query list show what was asked;
    ``scrub_queries`` replaces personal data in that text first (``privacy.scrub``) and
    keeps the counts, over every text given, as ``evaluate(scrub_queries=True)`` does.
    """
    if k < 1:
        raise UsageError(f"k={k} must be at least 1, e.g. 10")
    if worst < 0:
        raise UsageError(f"worst={worst} must be 0 or more")
    scrubbed = None
    if scrub_queries:
        queries, scrubbed = scrub_texts(queries or {})
    by_id = catalogue.by_id
    types, warnings = query_types(qrels, catalogue)
    warnings += run_warnings(qrels, run, catalogue)
    ranks: dict[str, list[float]] = {}
    lost_to: dict[str, Counter[str]] = {}
    counted: dict[str, Counter[str]] = {}
    candidates: dict[str, list[tuple[float, int, WorstQuery]]] = {}
    for order, (qid, judged) in enumerate(qrels.items()):
        ranking = run.results.get(qid, ())
        position = {item: r for r, (item, _) in enumerate(ranking, start=1)}
        first = min((position[i] for i, g in judged.items() if g >= 1 and i in position),
                    default=None)
        winner = by_id.get(ranking[0][0]) if ranking else None
        winner_type = (NO_RESULTS if not ranking else UNKNOWN_ITEM if winner is None
                       else winner.type)
        for t in types.get(qid, ()):
            c = counted.setdefault(t, Counter())
            c["queries"] += 1
            c["hit1"] += first == 1
            c["hitk"] += first is not None and first <= k
            c["not_found"] += first is None
            ranks.setdefault(t, []).append(float("inf") if first is None else float(first))
            if first != 1:
                lost_to.setdefault(t, Counter())[winner_type] += 1
            if first != 1 and t == types[qid][0]:  # listed once, under its first type
                wq = WorstQuery(t, qid, (queries or {}).get(qid, ""), first,
                                _wanted(judged, t, ranking, first, by_id),
                                None if not ranking else item_ref(winner)
                                if winner is not None else _unknown_ref(ranking[0][0]))
                candidates.setdefault(t, []).append(
                    (-(first or float("inf")), order, wq))
    rows = []
    for t in sorted(counted):
        c = counted[t]
        n = c["queries"]
        lost = sum(lost_to.get(t, Counter()).values())
        shares = {w: cnt / lost for w, cnt in sorted(lost_to.get(t, Counter()).items(),
                                                      key=lambda kv: (-kv[1], kv[0]))}
        rows.append(MissRow(t, n, c["hit1"] / n, c["hitk"] / n, n - c["hitk"],
                            _median_rank(ranks[t]), c["not_found"], lost, shares))
    worst_out = tuple(wq for t in sorted(candidates)
                      for _, _, wq in sorted(candidates[t], key=lambda x: x[:2])[:worst])
    depth = max((len(p) for p in run.results.values()), default=0)
    return MissReport(run.name, k, depth, tuple(rows), worst_out, headline(run.name, tuple(rows)),
                      tuple(warnings), scrubbed)


CSV_COLUMNS = ("type", "queries", "hit_at_1", "hit_at_k", "misses", "median_rank", "not_found",
               "lost", "lost_to")
