"""Relevance judgments (qrels) in TREC format: ``qid 0 item_id grade``.

Grades are whole numbers by the grammar in ``numbers`` that the run reader uses too.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path

from .errors import InputError, looks_like
from .files import atomic_write, read_text
from .numbers import WHOLE_FORMS, parse_whole

Qrels = dict[str, dict[str, int]]  # qid -> item id -> grade


def read_qrels(path: str | Path) -> Qrels:
    """Read TREC qrels; a repeated (qid, item) pair is an error naming both lines.

    Plainly written files go through the columnar parser (``qrelcolumns``); anything
    else, and every error, is read line by line here."""
    from .qrelcolumns import read_qrels_columns

    fast = read_qrels_columns(path)
    if fast is not None:
        return fast
    text = read_text(path, "qrels file")
    out: Qrels = {}
    first: dict[tuple[str, str], int] = {}
    for n, line in enumerate(text.split("\n"), start=1):
        parts = line.split()
        if not parts:
            continue
        if "\x00" in line:
            raise InputError(path, "NUL byte in line; the file is binary or corrupt", line=n)
        if len(parts) != 4:
            raise InputError(path, f"expected 4 fields 'qid 0 item_id grade', got {len(parts)}"
                             f"{looks_like(line)}", line=n)
        qid, _, item, grade_s = parts
        grade = parse_whole(grade_s)
        if grade is None:
            raise InputError(path, f"grade {grade_s!r} is not a whole number; write "
                             f"{WHOLE_FORMS}", line=n, field="grade")
        key = (qid, item)
        if key in first:
            raise InputError(path, f"duplicate judgment for query {qid!r}, item {item!r} "
                             f"(first on line {first[key]})", line=n)
        first[key] = n
        out.setdefault(qid, {})[item] = grade
    if not out:
        raise InputError(path, "no judgments; expected lines of 'qid 0 item_id grade'")
    return out


def write_qrels(path: str | Path, qrels: Mapping[str, Mapping[str, int]]) -> None:
    """Write qrels with queries in given order and items sorted by id (stable diffs)."""
    with atomic_write(path) as fh:
        for qid, items in qrels.items():
            for item in sorted(items):
                fh.write(f"{qid} 0 {item} {int(items[item])}\n")


def relevant(qrels: Mapping[str, Mapping[str, int]], min_grade: int = 1) -> dict[str, set[str]]:
    """Items judged at least ``min_grade`` per query."""
    return {q: {i for i, g in items.items() if g >= min_grade} for q, items in qrels.items()}
