"""Plain aligned text tables for the terminal, and the same rows as CSV files.

Reports render themselves to text with ``text_table``; ``write_csv`` writes their
``as_dict`` rows for spreadsheets and scripts (empty cell for a missing value).
"""

from __future__ import annotations

import csv
import math
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

from .files import atomic_write


def text_table(header: Sequence[str], rows: Sequence[Sequence[Any]], align: str | None = None) -> str:
    """Columns padded to their widest cell; ``align`` has 'l' or 'r' per column
    (default: first column left, the rest right)."""
    cells = [[str(h) for h in header]] + [["" if c is None else str(c) for c in r] for r in rows]
    widths = [max(len(r[i]) for r in cells) for i in range(len(header))]
    align = align or "l" + "r" * (len(header) - 1)
    lines = []
    for n, r in enumerate(cells):
        lines.append("  ".join(c.ljust(w) if a == "l" else c.rjust(w)
                               for c, w, a in zip(r, widths, align)).rstrip())
        if n == 0:
            lines.append("  ".join("-" * w for w in widths))
    return "\n".join(lines)


def _cell(v: Any) -> Any:
    if v is None or (isinstance(v, float) and math.isnan(v)):
        return ""
    if isinstance(v, (list, tuple)):
        return " ".join(map(str, v))
    if isinstance(v, Mapping):
        return " ".join(f"{k}={x}" for k, x in v.items())
    return v


def write_csv(path: str | Path, rows: Sequence[Mapping[str, Any]], columns: Sequence[str]) -> None:
    """Write dict rows as CSV with the given columns, atomically."""
    with atomic_write(path, newline="") as fh:
        out = csv.writer(fh, lineterminator="\n")
        out.writerow(columns)
        for r in rows:
            out.writerow([_cell(r.get(c)) for c in columns])
