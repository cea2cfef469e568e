"""Exporting review sheets: which (query, item) pairs to review, sampled and dealt out
to one sheet per reviewer, with query text scrubbed of personal data."""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..catalogue import Catalogue, Item
from ..destinations import NO_TYPE, query_types, stratum
from ..errors import UsageError
from ..judgments import Qrels
from ..privacy import KINDS, scrub
from ..runs import Run
from ..sampling import stratified_sample
from .sheets import SheetRow, one_line, write_sheet

PAIRS = ("silver", "pooled", "both")
SNIPPET_CHARS = 240
DEFAULT_OVERLAP = 0.2  # common practice, no source: a fifth of the queries double-reviewed
FORMATS = (".csv", ".xlsx")


@dataclass(frozen=True)
class SheetFile:
    path: str
    queries: int
    silver_rows: int
    pooled_rows: int


@dataclass(frozen=True)
class ExportSummary:
    """What ``export_sheet`` wrote."""

    sheets: tuple[SheetFile, ...]
    queries: int
    overlap_queries: int
    queries_per_type: Mapping[str, int]
    max_grade: int
    scrubbed: Mapping[str, int]
    skipped_unknown_items: int  # pooled run entries for items not in the catalogue

    def as_dict(self) -> dict[str, Any]:
        return {"sheets": [asdict(s) for s in self.sheets], "queries": self.queries,
                "overlap_queries": self.overlap_queries,
                "queries_per_type": dict(self.queries_per_type), "max_grade": self.max_grade,
                "scrubbed": dict(self.scrubbed),
                "skipped_unknown_items": self.skipped_unknown_items}


def export_sheet(qrels: Qrels, queries: Mapping[str, str], catalogue: Catalogue,
                 out: str | Path, *, runs: Sequence[Run] = (), pairs: str | None = None,
                 depth: int = 10, sample: int | None = None, reviewers: int = 1,
                 overlap: float | None = None, max_grade: int | None = None,
                 styles: Mapping[str, str] | None = None, scrub_queries: bool = True,
                 seed: int = 0) -> ExportSummary:
    """Write review sheet(s) for the judgments in ``qrels`` and/or pooled run results.

    ``pairs``: "silver" (every judged pair: confirm or correct), "pooled" (the top
    ``depth`` results of ``runs`` not yet judged: finds missing relevant items) or
    "both"; default "silver" without runs, "both" with. ``sample`` draws that many
    queries, stratified by the destination type of each query's best-graded item.
    ``reviewers`` > 1 writes one sheet per reviewer (``out`` stem + ``-1``, ``-2``, ...):
    a share ``overlap`` of the queries goes to every sheet (for agreement), the rest is
    dealt out in turn. Query text is scrubbed of personal data unless ``scrub_queries``
    is False.
    """
    out = Path(out)
    pairs = pairs or ("both" if runs else "silver")
    _check_export_options(out, runs, pairs, depth, sample, reviewers, overlap, max_grade)
    if reviewers > 1 and overlap is None:
        overlap = DEFAULT_OVERLAP
    grades = [g for items in qrels.values() for g in items.values()]
    scale = max_grade if max_grade is not None else max([1, *grades])
    if grades and max(grades) > scale:
        raise UsageError(f"highest grade {scale} is below the highest grade in the judgments "
                         f"({max(grades)}); raise it or leave it out")
    if min(grades, default=0) < 0:
        raise UsageError(f"negative grade {min(grades)} in the judgments; review sheets use "
                         "grades 0 and up")
    styles = styles or {}

    qids = _query_universe(qrels, queries, catalogue, runs, pairs)
    types, _ = query_types(qrels, catalogue)  # every judged item is in the catalogue
    qids = stratified_sample(qids, lambda q: stratum(types.get(q, ())), sample, seed)
    rng = np.random.default_rng(seed)
    shared, dealt = _split_for_reviewers(qids, reviewers, overlap or 0.0, rng)

    scrubbed = dict.fromkeys(KINDS, 0)
    skipped = 0
    rows_by_q: dict[str, list[SheetRow]] = {}
    for q in qids:
        text = queries[q]
        if scrub_queries:
            text, counts = scrub(text)
            for k, v in counts.items():
                scrubbed[k] += v
        rows, unknown = _rows_for_query(q, text, styles.get(q, ""), qrels.get(q, {}),
                                        catalogue, runs, pairs, depth)
        skipped += unknown
        if rows:
            rows_by_q[q] = rows
    if not rows_by_q:
        raise UsageError("nothing to review: no judged pairs"
                         + (" and no unjudged run results" if pairs != "silver" else "")
                         + " for the chosen queries")

    paths = _sheet_paths(out, reviewers)
    files = []
    for i, path in enumerate(paths):
        mine = [q for q in qids if q in rows_by_q and (q in shared or dealt.get(q) == i)]
        rows = [r for q in mine for r in rows_by_q[q]]
        note = f"reviewer {i + 1} of {reviewers}" if reviewers > 1 else ""
        write_sheet(path, rows, scale, note)
        files.append(SheetFile(str(path), len(mine),
                               sum(r.reason == "silver" for r in rows),
                               sum(r.reason == "pooled" for r in rows)))
    per_type = Counter(t for q in qids if q in rows_by_q for t in types.get(q, (NO_TYPE,)))
    return ExportSummary(tuple(files), len(rows_by_q),
                         sum(1 for q in shared if q in rows_by_q) if reviewers > 1 else 0,
                         dict(sorted(per_type.items())), scale, scrubbed, skipped)


def _check_export_options(out: Path, runs: Sequence[Run], pairs: str, depth: int,
                          sample: int | None, reviewers: int, overlap: float | None,
                          max_grade: int | None) -> None:
    """Reject conflicting or out-of-range options before any work, naming the flags."""
    if out.suffix.lower() not in FORMATS:
        raise UsageError(f"sheet {out} must end in .csv or .xlsx")
    if pairs not in PAIRS:
        raise UsageError(f"pairs {pairs!r} is not one of: {', '.join(PAIRS)}")
    if pairs in ("pooled", "both") and not runs:
        raise UsageError(f"pairs {pairs!r} needs at least one run to pool; give runs")
    if pairs == "silver" and runs:
        raise UsageError("runs have no effect with pairs 'silver'; drop one of them")
    if depth < 1:
        raise UsageError(f"pooling depth {depth} must be 1 or more")
    if sample is not None and sample < 1:
        raise UsageError(f"sample of {sample} queries: must be 1 or more")
    if reviewers < 1:
        raise UsageError(f"{reviewers} reviewers: must be 1 or more")
    if overlap is not None and reviewers < 2:
        raise UsageError("an overlap needs 2 or more reviewers")
    if overlap is not None and not 0 < overlap <= 1:
        raise UsageError(f"overlap {overlap} must be a share of queries in (0, 1]")
    if max_grade is not None and max_grade < 1:
        raise UsageError(f"highest grade {max_grade} must be 1 or more")
    names = [r.name for r in runs]
    if len(set(names)) != len(names):
        raise UsageError("two runs share a name; rename one (the run tag)")


def _query_universe(qrels: Qrels, queries: Mapping[str, str], catalogue: Catalogue,
                    runs: Sequence[Run], pairs: str) -> list[str]:
    """Judged queries in qrels order, then (when pooling) run queries in queries order."""
    for q, items in qrels.items():
        if q not in queries:
            raise UsageError(f"query {q!r} is judged but has no text in the queries file; "
                             "give the queries file the judgments were made for")
        for item in items:
            if item not in catalogue.by_id:
                raise UsageError(f"item {item!r} judged for query {q!r} is not in the "
                                 f"catalogue {catalogue.path}")
    qids = list(qrels) if pairs != "pooled" else []
    if pairs != "silver":
        in_runs = {q for r in runs for q in r.results}
        seen = set(qids)
        pooled_q = [q for q in qrels if q in in_runs and q not in seen]
        pooled_q += [q for q in queries if q in in_runs and q not in qrels]
        qids += pooled_q
    return qids


def _split_for_reviewers(qids: list[str], reviewers: int, overlap: float,
                         rng: np.random.Generator) -> tuple[set[str], dict[str, int]]:
    """Queries every reviewer sees, and which reviewer gets each of the others."""
    if reviewers == 1:
        return set(qids), {}
    m = max(1, round(overlap * len(qids))) if qids else 0
    shared = {qids[i] for i in rng.permutation(len(qids))[:m]}
    rest = [q for q in qids if q not in shared]
    return shared, {q: k % reviewers for k, q in enumerate(rest)}


def _rows_for_query(qid: str, text: str, style: str, judged: Mapping[str, int],
                    catalogue: Catalogue, runs: Sequence[Run], pairs: str,
                    depth: int) -> tuple[list[SheetRow], int]:
    rows = []
    if pairs != "pooled":
        for item in sorted(judged, key=lambda i: (-judged[i], i)):
            rows.append(_row(qid, text, style, catalogue.by_id[item], "silver", judged[item]))
    unknown = 0
    if pairs != "silver":
        best: dict[str, int] = {}
        for run in runs:
            for rank, (item, _) in enumerate(run.results.get(qid, ())[:depth], start=1):
                if item not in judged and rank < best.get(item, depth + 1):
                    best[item] = rank
        for item in sorted(best, key=lambda i: (best[i], i)):
            if item not in catalogue.by_id:
                unknown += 1
                continue
            rows.append(_row(qid, text, style, catalogue.by_id[item], "pooled", None))
    return rows, unknown


def _row(qid: str, text: str, style: str, item: Item, reason: str,
         grade: int | None) -> SheetRow:
    return SheetRow(qid, text, style, item.id, item.type, one_line(item.title),
                    _snippet(item.text), item.deeplink, reason, grade)


def _snippet(text: str) -> str:
    text = one_line(text)
    if len(text) <= SNIPPET_CHARS:
        return text
    cut = text[:SNIPPET_CHARS].rsplit(" ", 1)[0]
    return cut + " …"


def _sheet_paths(out: Path, reviewers: int) -> list[Path]:
    if reviewers == 1:
        return [out]
    return [out.with_name(f"{out.stem}-{i}{out.suffix}") for i in range(1, reviewers + 1)]
