"""Review sheets: judgments out to people in a spreadsheet, and back in as qrels.

Correcting machine (silver) labels is much faster than labelling from scratch. A sheet
has one row per (query, item) to judge with the query, the item's type, title, snippet
and link, the silver grade, and an empty ``verdict`` column. Filled sheets come back as
reviewed qrels plus a report: silver precision with Wilson intervals, new relevant items
found by pooling runs, and reviewer agreement (Cohen's kappa) when rows were shared.

Merge rule (``import_sheets``), per (query, item):
  * a verdict becomes a grade: ``ok`` keeps the silver grade, ``no`` is 0, a number is
    that grade; a blank verdict is "not reviewed yet";
  * reviewed by one or more sheets: the median of their grades, rounded down when it
    falls between two grades (two reviewers 1 and 2 give 1; a third sheet settles a
    disagreement by majority);
  * not reviewed: a silver row keeps its silver grade; a pooled row writes nothing;
  * pairs of ``base`` judgments that no sheet holds are kept as they are.
Reviewed grades of 0 are written as explicit ``0`` lines: a person looked and said no.

Sheets are CSV (UTF-8 with BOM, CRLF, as spreadsheet programs expect) or .xlsx with a
drop-down on the verdict column. Every text cell is guarded against formula injection
(OWASP's CSV injection guidance: a leading = + - @ tab or CR gets a ' prefix), and the
guard is undone on import so the round trip is exact.
"""

from __future__ import annotations

import csv
import io
import math
import re
from collections import Counter
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import asdict, dataclass, field
from itertools import combinations
from pathlib import Path
from typing import Any

import numpy as np

from .sampling import stratified_sample
from .stats import Proportion, cohen_kappa, wilson_interval
from .catalogue import Catalogue, Item
from .destinations import NO_TYPE, query_types, stratum
from .errors import InputError, UsageError
from .files import atomic_write, read_text
from .ids import is_valid_id
from .judgments import Qrels
from .privacy import KINDS, scrub
from .runs import Run

COLUMNS = ("qid", "query", "style", "item_id", "type", "title", "snippet", "link", "reason",
           "silver_grade", "verdict", "note")
REQUIRED = ("qid", "item_id", "reason", "silver_grade", "verdict")
REASONS = ("silver", "pooled")  # judged in the input qrels / retrieved by a run, unjudged
PAIRS = ("silver", "pooled", "both")
SNIPPET_CHARS = 240
DEFAULT_OVERLAP = 0.2  # common practice, no source: a fifth of the queries double-reviewed
FORMATS = (".csv", ".xlsx")
_DANGEROUS = ("=", "+", "-", "@", "\t", "\r")
_GUARDED = re.compile(r"^'+[=+\-@\t\r]")
_SCALE_NOTE = re.compile(r"^#\s*grade scale:\s*0\s*-\s*(\d+)\s*$")


# --- rows --------------------------------------------------------------------------------

@dataclass(frozen=True)
class SheetRow:
    """One (query, item) pair to judge, as written to and read from a sheet."""

    qid: str
    query: str
    style: str
    item_id: str
    type: str
    title: str
    snippet: str
    link: str
    reason: str  # "silver" or "pooled"
    silver_grade: int | None  # None on pooled rows
    verdict: str = ""
    note: str = ""
    line: int = field(default=0, compare=False)  # sheet line (import only)

    def cells(self) -> list[str]:
        grade = "" if self.silver_grade is None else str(self.silver_grade)
        return [self.qid, self.query, self.style, self.item_id, self.type, self.title,
                self.snippet, self.link, self.reason, grade, self.verdict, self.note]


def guard_cell(text: str) -> str:
    """Prefix ``'`` so a spreadsheet shows the text instead of running it as a formula.

    Text that already starts with quotes before a dangerous character gets one more, so
    ``unguard_cell`` can always undo exactly one.
    """
    if text.startswith(_DANGEROUS) or _GUARDED.match(text):
        return "'" + text
    return text


def unguard_cell(text: str) -> str:
    return text[1:] if _GUARDED.match(text) else text


# --- export ------------------------------------------------------------------------------

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
        raise UsageError(f"--max-grade {scale} is below the highest grade in the judgments "
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
        raise UsageError(f"--pairs {pairs!r} is not one of: {', '.join(PAIRS)}")
    if pairs in ("pooled", "both") and not runs:
        raise UsageError(f"--pairs {pairs} needs at least one run to pool (--runs)")
    if pairs == "silver" and runs:
        raise UsageError("--runs has no effect with --pairs silver; drop one of them")
    if depth < 1:
        raise UsageError(f"--depth {depth} must be 1 or more")
    if sample is not None and sample < 1:
        raise UsageError(f"--sample {sample} must be 1 or more")
    if reviewers < 1:
        raise UsageError(f"--reviewers {reviewers} must be 1 or more")
    if overlap is not None and reviewers < 2:
        raise UsageError("--overlap needs --reviewers 2 or more")
    if overlap is not None and not 0 < overlap <= 1:
        raise UsageError(f"--overlap {overlap} must be a share of queries in (0, 1]")
    if max_grade is not None and max_grade < 1:
        raise UsageError(f"--max-grade {max_grade} must be 1 or more")
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
    return SheetRow(qid, text, style, item.id, item.type, _one_line(item.title),
                    _snippet(item.text), item.deeplink, reason, grade)


def _one_line(text: str) -> str:
    return " ".join(text.split())


def _snippet(text: str) -> str:
    text = _one_line(text)
    if len(text) <= SNIPPET_CHARS:
        return text
    cut = text[:SNIPPET_CHARS].rsplit(" ", 1)[0]
    return cut + " …"


def _sheet_paths(out: Path, reviewers: int) -> list[Path]:
    if reviewers == 1:
        return [out]
    return [out.with_name(f"{out.stem}-{i}{out.suffix}") for i in range(1, reviewers + 1)]


def _notes(max_grade: int, extra: str) -> list[str]:
    best = f"{max_grade} = exactly what the query asks for"
    scale = ("1 = relevant" if max_grade == 1 else
             f"1 = partly relevant | {best}" if max_grade == 2 else
             f"1 = partly relevant ... {best}")
    head = "# trawl review sheet" + (f" ({extra})" if extra else "")
    return [
        head + ". Silver grades are machine estimates: please check them.",
        f"# verdict: ok = the silver grade is right | no or 0 = not relevant | {scale} "
        "| blank = not reviewed yet. Pooled rows have no silver grade: give a number or no.",
        f"# grade scale: 0-{max_grade}",
    ]


def write_sheet(path: str | Path, rows: Sequence[SheetRow], max_grade: int,
                note: str = "") -> None:
    """Write rows as a CSV or .xlsx review sheet (format from the suffix)."""
    path = Path(path)
    notes = _notes(max_grade, note)
    if path.suffix.lower() == ".xlsx":
        _write_xlsx(path, notes, [[guard_cell(c) for c in r.cells()] for r in rows],
                    verdicts(max_grade))
        return
    with atomic_write(path, encoding="utf-8-sig", newline="") as fh:
        w = csv.writer(fh, lineterminator="\r\n")
        for line in notes:
            w.writerow([line])
        w.writerow(COLUMNS)
        for r in rows:
            w.writerow([guard_cell(c) for c in r.cells()])


XLSX_WIDTHS = {"query": 32, "title": 36, "snippet": 60, "link": 24, "note": 30}
_FIXED_TIME = (1980, 1, 1, 0, 0, 0)  # zip entry times, so the same sheet gives the same bytes


def _write_xlsx(path: Path, notes: list[str], rows: list[list[str]],
                allowed: list[str]) -> None:
    """An .xlsx sheet: every cell text (ids like "007" stay text), a drop-down of the
    allowed verdicts, the header frozen. Written byte-identically for the same rows."""
    import datetime
    import zipfile

    from openpyxl import Workbook
    from openpyxl.styles import Font
    from openpyxl.utils import get_column_letter
    from openpyxl.worksheet.datavalidation import DataValidation
    from openpyxl.writer.excel import ExcelWriter

    wb = Workbook()
    ws = wb.active
    ws.title = "review"
    for r, line in enumerate(notes, start=1):
        ws.cell(r, 1, line).data_type = "s"
    head = len(notes) + 1
    for c, name in enumerate(COLUMNS, start=1):
        cell = ws.cell(head, c, name)
        cell.font = Font(bold=True)
        ws.column_dimensions[get_column_letter(c)].width = XLSX_WIDTHS.get(name, 12)
    for r, cells in enumerate(rows, start=head + 1):
        for c, value in enumerate(cells, start=1):
            cell = ws.cell(r, c, value)
            cell.data_type = "s"
            cell.number_format = "@"
    col = get_column_letter(COLUMNS.index("verdict") + 1)
    dv = DataValidation(type="list", formula1='"' + ",".join(allowed) + '"', allow_blank=True,
                        showErrorMessage=True, errorTitle="verdict",
                        error="Use " + ", ".join(allowed) + " or leave the cell blank.")
    dv.add(f"{col}{head + 1}:{col}{max(head + 1, head + len(rows))}")
    ws.add_data_validation(dv)
    ws.freeze_panes = ws.cell(head + 1, 1)
    fixed = datetime.datetime(2000, 1, 1)
    wb.properties.created = wb.properties.modified = fixed
    wb.properties.creator = "trawl"
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as archive:
        ExcelWriter(wb, archive).save()
    with zipfile.ZipFile(buf) as src, atomic_write(path, "wb") as fh, \
            zipfile.ZipFile(fh, "w", zipfile.ZIP_DEFLATED) as dst:
        for info in src.infolist():
            dst.writestr(zipfile.ZipInfo(info.filename, _FIXED_TIME), src.read(info.filename),
                         compress_type=zipfile.ZIP_DEFLATED)


def _xlsx_records(path: Path) -> list[tuple[int, list[str]]]:
    """Rows of the first worksheet as text cells, numbered like the spreadsheet shows."""
    import zipfile
    import zlib

    from openpyxl import load_workbook
    from openpyxl.utils.exceptions import InvalidFileException

    if not path.is_file():
        raise InputError(path, "review sheet not found")
    try:
        wb = load_workbook(path, read_only=True, data_only=True)
        try:
            ws = wb.worksheets[0]
            return [(n, [_xlsx_text(v) for v in row])
                    for n, row in enumerate(ws.iter_rows(values_only=True), start=1)]
        finally:
            wb.close()
    except (zipfile.BadZipFile, zlib.error, EOFError, SyntaxError, InvalidFileException,
            KeyError, OSError, ValueError, IndexError, TypeError, NotImplementedError,
            RuntimeError) as exc:
        # a damaged workbook fails deep inside zip (odd compression flags, "encrypted"
        # entries), zlib or XML parsing (SyntaxError is the base of the XML parsers' errors)
        detail = " ".join(str(exc).split())
        raise InputError(path, f"cannot read the .xlsx sheet: {detail}".rstrip()) from None


def _xlsx_text(v: Any) -> str:
    if v is None:
        return ""
    if isinstance(v, float) and v.is_integer():
        return str(int(v))
    return str(v)


def verdicts(max_grade: int) -> list[str]:
    """Allowed non-blank verdicts, in the order a drop-down shows them."""
    return ["ok", "no", *(str(g) for g in range(max_grade + 1))]


# --- import ------------------------------------------------------------------------------

@dataclass(frozen=True)
class Sheet:
    """A review sheet read back: its rows and the grade scale it declares."""

    path: str
    rows: tuple[SheetRow, ...]
    max_grade: int


def read_sheet(path: str | Path, catalogue: Catalogue) -> Sheet:
    """Read and validate a filled review sheet (CSV or .xlsx).

    Tolerates what spreadsheet programs do on saving: BOM, CRLF line ends, padded empty
    cells, extra columns. Errors name the sheet line and column.
    """
    path = Path(path)
    if path.suffix.lower() == ".xlsx":
        records = _xlsx_records(path)
    else:
        records = _csv_records(path)
    return _parse_sheet(path, records, catalogue)


def _csv_records(path: Path) -> list[tuple[int, list[str]]]:
    text = read_text(path, "review sheet")
    if "\x00" in text:
        raise InputError(path, "NUL byte in the sheet; the file is binary or corrupt",
                         line=text[: text.index("\x00")].count("\n") + 1)
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    out = []
    start = 1
    while True:
        try:
            row = next(reader)
        except StopIteration:
            return out
        except csv.Error as exc:
            raise InputError(path, f"malformed CSV: {exc}", line=reader.line_num) from None
        out.append((start, row))
        start = reader.line_num + 1


def _parse_sheet(path: Path, records: Iterable[tuple[int, list[str]]],
                 catalogue: Catalogue) -> Sheet:
    records = [(n, row) for n, row in records if any(c.strip() for c in row)]
    scale: int | None = None
    k = 0
    while k < len(records) and records[k][1][0].lstrip().startswith("#"):
        m = _SCALE_NOTE.match(records[k][1][0].strip())
        if m:
            scale = int(m.group(1))
        k += 1
    if k == len(records):
        raise InputError(path, "no header row; a review sheet needs columns "
                         f"{', '.join(REQUIRED)} (make one with 'trawl review export')")
    header_line, header = records[k]
    header = [h.strip().lower() for h in header]
    named = [h for h in header if h]
    dupes = [h for h, c in Counter(named).items() if c > 1]
    if dupes:
        raise InputError(path, f"column {dupes[0]!r} appears twice", line=header_line,
                         field="header")
    missing = [c for c in REQUIRED if c not in header]
    if missing:
        raise InputError(path, f"missing column {missing[0]!r}; a review sheet needs columns "
                         f"{', '.join(REQUIRED)} (make one with 'trawl review export')",
                         line=header_line, field="header")
    col = {h: i for i, h in enumerate(header) if h}

    raw = []
    for n, cells in records[k + 1:]:
        extra = [c for c in cells[len(header):] if c.strip()]
        if extra:
            raise InputError(path, f"{len(cells)} cells but the header names {len(header)}; "
                             "remove the cells right of the last column", line=n)
        cells = cells + [""] * (len(header) - len(cells))
        raw.append((n, {h: unguard_cell(cells[i]) for h, i in col.items()}))
    if scale is None:  # note rows deleted: trust the largest silver grade in the sheet
        scale = max([1] + [int(g) for _, r in raw if (g := r["silver_grade"].strip()).isdigit()])
    rows = []
    first: dict[tuple[str, str], int] = {}
    for n, r in raw:
        row = _parse_row(path, n, r, catalogue, scale)
        key = (row.qid, row.item_id)
        if key in first:
            raise InputError(path, f"duplicate row for query {row.qid!r}, item "
                             f"{row.item_id!r} (first on line {first[key]}); keep one",
                             line=n)
        first[key] = n
        rows.append(row)
    if not rows:
        raise InputError(path, "the sheet has a header but no rows")
    return Sheet(str(path), tuple(rows), scale)


def _parse_row(path: Path, n: int, r: Mapping[str, str], catalogue: Catalogue,
               scale: int) -> SheetRow:
    qid = r["qid"].strip()
    if not is_valid_id(qid):
        raise InputError(path, f"query id {qid!r} is empty or has white space", line=n,
                         field="qid")
    item = r["item_id"].strip()
    if item not in catalogue.by_id:
        hint = (" (a spreadsheet program may have turned an id like '007' into a number; "
                "format the column as text)" if item.isdigit() else "")
        raise InputError(path, f"item {item!r} is not in the catalogue {catalogue.path}"
                         + hint, line=n, field="item_id")
    reason = r["reason"].strip().lower()
    if reason not in REASONS:
        raise InputError(path, f"{reason!r} is not one of: {', '.join(REASONS)}", line=n,
                         field="reason")
    grade_s = r["silver_grade"].strip()
    grade: int | None = None
    if reason == "silver":
        grade = _whole(grade_s)
        if grade is None or not 0 <= grade <= scale:
            raise InputError(path, f"{grade_s!r} is not a grade 0-{scale}; silver rows "
                             "need their silver grade", line=n, field="silver_grade")
    elif grade_s:
        raise InputError(path, f"pooled rows have no silver grade, found {grade_s!r}; "
                         "clear the cell", line=n, field="silver_grade")
    verdict = r["verdict"].strip().lower()
    if verdict:
        allowed = verdicts(scale)
        num = _whole(verdict)
        if num is not None:
            verdict = str(num)
        if verdict not in allowed:
            raise InputError(path, f"{r['verdict'].strip()!r} is not allowed; use "
                             f"{', '.join(allowed)} or leave it blank", line=n,
                             field="verdict")
        if verdict == "ok" and reason == "pooled":
            raise InputError(path, "'ok' confirms a silver grade, but this pooled row has "
                             f"none; give a grade 0-{scale} or no", line=n, field="verdict")
    item_obj = catalogue.by_id[item]
    return SheetRow(qid, _one_line(r.get("query", "")), r.get("style", "").strip(), item,
                    item_obj.type, r.get("title", item_obj.title), r.get("snippet", ""),
                    r.get("link", ""), reason, grade, verdict, r.get("note", ""), line=n)


def _whole(s: str) -> int | None:
    """A whole number, also as spreadsheets may re-save it ("2.0")."""
    try:
        x = float(s)
    except ValueError:
        return None
    return int(x) if math.isfinite(x) and x.is_integer() else None


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
                "kappa": _num(self.kappa), "kappa_linear": _num(self.kappa_linear)}


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


def _num(x: float) -> float | None:
    return None if math.isnan(x) else x
