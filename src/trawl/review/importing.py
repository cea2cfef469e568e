"""Importing filled review sheets: the merge rule that turns verdicts into reviewed qrels,
and the report (silver precision, pooled finds, reviewer agreement)."""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from itertools import combinations
from pathlib import Path
from typing import Any

from ..catalogue import Catalogue
from ..errors import InputError, UsageError
from ..judgments import Qrels
from ..stats import Proportion, cohen_kappa, none_if_nan, wilson_interval
from .sheets import Sheet, SheetRow, read_sheet, verdicts

def verdict_grade(row: SheetRow) -> int | None:
    """The grade a row's verdict stands for; None when not reviewed."""
    if not row.verdict:
        return None
    if row.verdict == "ok":
        return row.silver_grade
    if row.verdict == "no":
        return 0
    return int(row.verdict)


def merge_grades(grades: Sequence[int]) -> int:
    """Median of the reviewers' grades, rounded down when between two grades."""
    g = sorted(grades)
    return (g[(len(g) - 1) // 2] + g[len(g) // 2]) // 2


@dataclass(frozen=True)
class SheetProgress:
    path: str
    rows: int
    filled: int

    @property
    def left(self) -> int:
        return self.rows - self.filled


@dataclass(frozen=True)
class ReviewerAgreement:
    """Cohen's kappa between two sheets over the rows both reviewed."""

    sheet_a: str
    sheet_b: str
    n: int
    kappa: float
    kappa_linear: float  # weighted by grade distance

    def as_dict(self) -> dict[str, Any]:
        return {"sheet_a": self.sheet_a, "sheet_b": self.sheet_b, "n": self.n,
                "kappa": none_if_nan(self.kappa), "kappa_linear": none_if_nan(self.kappa_linear)}


@dataclass(frozen=True)
class Disagreement:
    qid: str
    item_id: str
    query: str
    title: str
    grades: Mapping[str, int]  # sheet path -> grade
    final: int


@dataclass(frozen=True)
class ReviewReport:
    """What the reviewed sheets say about the silver judgments and the reviewers."""

    sheets: tuple[SheetProgress, ...]
    pairs: int
    reviewed: int
    silver_precision: Proportion
    precision_by_type: Mapping[str, Proportion]
    precision_by_style: Mapping[str, Proportion]
    pooled_reviewed: int
    pooled_relevant: int
    pooled_relevant_by_type: Mapping[str, int]
    agreement: tuple[ReviewerAgreement, ...]
    disagreements: tuple[Disagreement, ...]
    max_grade: int

    def as_dict(self) -> dict[str, Any]:
        return {
            "sheets": [{"path": s.path, "rows": s.rows, "filled": s.filled, "left": s.left}
                       for s in self.sheets],
            "pairs": self.pairs, "reviewed": self.reviewed, "left": self.pairs - self.reviewed,
            "silver_precision": self.silver_precision.as_dict(),
            "precision_by_type": {k: v.as_dict() for k, v in self.precision_by_type.items()},
            "precision_by_style": {k: v.as_dict() for k, v in self.precision_by_style.items()},
            "pooled": {"reviewed": self.pooled_reviewed, "relevant": self.pooled_relevant,
                       "relevant_by_type": dict(self.pooled_relevant_by_type)},
            "agreement": [a.as_dict() for a in self.agreement],
            "disagreements": [{"qid": d.qid, "item_id": d.item_id, "query": d.query,
                               "title": d.title, "grades": dict(d.grades), "final": d.final}
                              for d in self.disagreements],
            "max_grade": self.max_grade,
        }


@dataclass(frozen=True)
class ReviewImport:
    qrels: Qrels
    report: ReviewReport


def import_sheets(paths: Sequence[str | Path], catalogue: Catalogue,
                  base: Qrels | None = None) -> ReviewImport:
    """Read filled sheets, merge them into qrels (rule in the module docstring) and
    report silver precision, pooled finds and reviewer agreement.

    Half-filled sheets are fine: what is filled is used, the rest counts as left.
    """
    if not paths:
        raise UsageError("give at least one review sheet")
    if len({str(Path(p).resolve()) for p in paths}) != len(paths):
        raise UsageError("the same sheet is given twice; each reviewer's sheet counts once")
    sheets = [read_sheet(p, catalogue) for p in paths]
    scale = max(s.max_grade for s in sheets)

    first: dict[tuple[str, str], SheetRow] = {}
    where: dict[tuple[str, str], str] = {}
    given: dict[tuple[str, str], dict[str, int]] = {}
    for s in sheets:
        for r in s.rows:
            key = (r.qid, r.item_id)
            if key in first and (first[key].reason, first[key].silver_grade) != (
                    r.reason, r.silver_grade):
                raise InputError(s.path, f"query {r.qid!r}, item {r.item_id!r}: "
                                 f"{r.reason} grade {r.silver_grade} differs from "
                                 f"{where[key]} ({first[key].reason} grade "
                                 f"{first[key].silver_grade}); sheets of one export agree",
                                 line=r.line)
            first.setdefault(key, r)
            where.setdefault(key, f"{s.path}:{r.line}")
            g = verdict_grade(r)
            if g is not None:
                given.setdefault(key, {})[s.path] = g

    final: dict[tuple[str, str], int] = {}
    for key, r in first.items():
        if key in given:
            final[key] = merge_grades(list(given[key].values()))
        elif r.reason == "silver":
            final[key] = r.silver_grade  # type: ignore[assignment]

    qrels: Qrels = {}
    for q, items in (base or {}).items():
        for item, g in items.items():
            qrels.setdefault(q, {})[item] = g
    for (q, item), g in final.items():
        qrels.setdefault(q, {})[item] = g
    if not qrels:
        raise UsageError("nothing to write: the sheets hold no silver rows and no verdicts yet")
    return ReviewImport(qrels, _report(sheets, first, given, final, catalogue, scale))


def _report(sheets: Sequence[Sheet], rows: Mapping[tuple[str, str], SheetRow],
            given: Mapping[tuple[str, str], Mapping[str, int]],
            final: Mapping[tuple[str, str], int], catalogue: Catalogue,
            scale: int) -> ReviewReport:
    progress = tuple(SheetProgress(s.path, len(s.rows), sum(bool(r.verdict) for r in s.rows))
                     for s in sheets)
    silver = [k for k, r in rows.items()
              if r.reason == "silver" and (r.silver_grade or 0) > 0 and k in given]
    kept = {k: final[k] > 0 for k in silver}

    def share(keys: list[tuple[str, str]]) -> Proportion:
        return wilson_interval(sum(kept[k] for k in keys), len(keys))

    by_type: dict[str, list] = {}
    by_style: dict[str, list] = {}
    for k in silver:
        by_type.setdefault(catalogue.by_id[k[1]].type, []).append(k)
        if rows[k].style:
            by_style.setdefault(rows[k].style, []).append(k)
    pooled = [k for k, r in rows.items() if r.reason == "pooled" and k in given]
    found = [k for k in pooled if final[k] > 0]

    agreement = []
    for a, b in combinations([s.path for s in sheets], 2):
        both = [k for k, g in given.items() if a in g and b in g]
        if both:
            ga, gb = [given[k][a] for k in both], [given[k][b] for k in both]
            labels = list(range(scale + 1))
            agreement.append(ReviewerAgreement(a, b, len(both), cohen_kappa(ga, gb, None, labels),
                                               cohen_kappa(ga, gb, "linear", labels)))
    disagreements = tuple(
        Disagreement(q, item, rows[(q, item)].query, rows[(q, item)].title, dict(g),
                     final[(q, item)])
        for (q, item), g in given.items() if len(set(g.values())) > 1)
    return ReviewReport(
        progress, len(rows), len(given), share(silver),
        {t: share(v) for t, v in sorted(by_type.items())},
        {s: share(v) for s, v in sorted(by_style.items())},
        len(pooled), len(found),
        dict(sorted(Counter(catalogue.by_id[k[1]].type for k in found).items())),
        tuple(agreement), disagreements, scale)
