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

``export`` writes sheets, ``sheets`` reads and writes the files (CSV or .xlsx, with the
formula-injection guard), ``importing`` merges filled sheets back; the names below are
the package's public face.
"""

from .export import DEFAULT_OVERLAP, PAIRS, ExportSummary, SheetFile, export_sheet
from .importing import (ReviewImport, ReviewReport, import_sheets, merge_grades,
                        verdict_grade)
from .sheets import COLUMNS, Sheet, SheetRow, guard_cell, read_sheet, unguard_cell, write_sheet

__all__ = ["COLUMNS", "DEFAULT_OVERLAP", "PAIRS", "ExportSummary", "ReviewImport",
           "ReviewReport", "Sheet", "SheetFile", "SheetRow", "export_sheet", "guard_cell",
           "import_sheets", "merge_grades", "read_sheet", "unguard_cell", "verdict_grade",
           "write_sheet"]
