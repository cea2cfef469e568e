"""Review sheet files: the rows, writing them as CSV or .xlsx, reading filled ones back.

Sheets are CSV (UTF-8 with BOM, CRLF, as spreadsheet programs expect) or .xlsx with a
drop-down on the verdict column. Every text cell is guarded against formula injection
(OWASP's CSV injection guidance: a leading = + - @ tab or CR gets a ' prefix), and the
guard is undone on import so the round trip is exact.
"""

from __future__ import annotations

import csv
import io
import re
from collections import Counter
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..catalogue import Catalogue
from ..errors import InputError
from ..files import atomic_write, read_text
from ..ids import is_valid_id
from ..numbers import parse_whole

COLUMNS = ("qid", "query", "style", "item_id", "type", "title", "snippet", "link", "reason",
           "silver_grade", "verdict", "note")
REQUIRED = ("qid", "item_id", "reason", "silver_grade", "verdict")
REASONS = ("silver", "pooled")  # judged in the input qrels / retrieved by a run, unjudged
_DANGEROUS = ("=", "+", "-", "@", "\t", "\r")
_GUARDED = re.compile(r"^'+[=+\-@\t\r]")
_SCALE_NOTE = re.compile(r"^#\s*grade scale:\s*0\s*-\s*(\d+)\s*$")


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


def one_line(text: str) -> str:
    return " ".join(text.split())


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
    return SheetRow(qid, one_line(r.get("query", "")), r.get("style", "").strip(), item,
                    item_obj.type, r.get("title", item_obj.title), r.get("snippet", ""),
                    r.get("link", ""), reason, grade, verdict, r.get("note", ""), line=n)


def _whole(s: str) -> int | None:
    """A whole number by the grammar qrels use too (``numbers``; "2.0", as spreadsheets
    may re-save it, is 2; "1_0" and "2e0" are not grades)."""
    return parse_whole(s)
