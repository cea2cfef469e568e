"""Report rows as CSV files, for spreadsheets and scripts.

``write_csv`` writes ``as_dict`` rows (empty cell for a missing value); terminal
tables live in ``report.text``.
"""

from __future__ import annotations

import csv
import math
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

from .files import atomic_write


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

