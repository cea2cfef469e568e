"""The files an evaluation leaves behind besides the report: every table as JSON and
CSV, written atomically, by the same writers the single-purpose commands use."""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

from ..files import atomic_write, write_text_atomic
from ..tables import write_csv

SCORE_COLUMNS = ("run", "metric", "type", "n", "mean", "low", "high")


def write_json(path: Path, obj: Any) -> None:
    """``obj`` as indented UTF-8 JSON with a final newline, atomically."""
    with atomic_write(path) as fh:
        json.dump(obj, fh, indent=2, ensure_ascii=False)
        fh.write("\n")


def write_rows(path: str | Path, rows: Sequence[Mapping[str, Any]],
               columns: Sequence[str]) -> None:
    """Table rows to ``path``: a JSON list when it ends in ``.json``, CSV with
    ``columns`` otherwise; atomically either way."""
    if str(path).endswith(".json"):
        write_text_atomic(path, json.dumps(list(rows), indent=1, ensure_ascii=False) + "\n")
    else:
        write_csv(path, rows, columns)


def per_query_columns(metrics: Sequence[str]) -> list[str]:
    """Columns of a per-query score table."""
    return ["run", "qid", "types", *metrics]


def write_tables(folder: Path, scores, comparison, misses) -> None:
    """Every table of one judgment set as JSON and CSV."""
    from ..compare import CSV_COLUMNS
    from ..misses import CSV_COLUMNS as MISS_COLUMNS

    write_json(folder / "scores.json", scores.as_dict())
    write_csv(folder / "scores.csv", scores.score_rows(), list(SCORE_COLUMNS))
    write_csv(folder / "per-query.csv", scores.per_query_rows(),
              per_query_columns(scores.metrics))
    if comparison is not None:
        write_json(folder / "comparison.json", comparison.as_dict())
        write_csv(folder / "comparison.csv", [r.as_dict() for r in comparison.rows],
                  CSV_COLUMNS)
    write_json(folder / "misses.json", [m.as_dict() for m in misses])
    write_csv(folder / "misses.csv",
              [{"run": m.run, "k": m.k, **r.as_dict()} for m in misses for r in m.rows],
              ["run", "k", *MISS_COLUMNS])
