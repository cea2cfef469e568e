"""Qrels read through the columnar parser of ``columns``: one pass of pyarrow's CSV
reader instead of a Python split per line, for judgment files of hundreds of thousands
of lines. The result is the same ``Qrels`` mapping; anything the parser cannot vouch
for (a grade outside trawl's grammar, a repeated pair, odd whitespace) returns None and
``judgments.read_qrels`` reads the file line by line, which also locates every error.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from .columns import blocks, normalised, parse_block
from .numbers import parse_whole

QRELS_FIELDS = ("qid", "iteration", "item", "grade")


def read_qrels_columns(path: str | Path) -> dict[str, dict[str, int]] | None:
    """qid -> item id -> grade, queries and items in file order; or None (see module)."""
    import pyarrow as pa

    tables = []
    try:
        for i, block in enumerate(blocks(Path(path))):
            if i and bytes(block[:3]) == b"\xef\xbb\xbf":
                return None  # pyarrow would drop it as a byte-order mark; the file keeps it
            table = parse_block(block, QRELS_FIELDS, {}) \
                or parse_block(normalised(block), QRELS_FIELDS, {})
            if table is None:
                return None
            tables.append(table)
    except OSError:
        return None
    if not tables or sum(t.num_rows for t in tables) == 0:
        return None
    table = pa.concat_tables(tables).unify_dictionaries()
    queries, qids = _codes(table["qid"])
    items, item_ids = _codes(table["item"])
    grade_codes, grade_texts = _codes(table["grade"])
    grades = [parse_whole(g) for g in grade_texts]
    if any(g is None for g in grades):
        return None
    keys = np.sort(queries.astype(np.int64) * max(len(item_ids), 1) + items)
    if (keys[1:] == keys[:-1]).any():
        return None  # a repeated pair: the careful reader names both lines
    out: dict[str, dict[str, int]] = {}
    for q, item, g in zip(queries.tolist(), items.tolist(),
                          np.asarray(grades, dtype=np.int64)[grade_codes].tolist()):
        judged = out.get(qids[q])
        if judged is None:
            judged = out[qids[q]] = {}
        judged[item_ids[item]] = g
    return out


def _codes(column: Any) -> tuple[np.ndarray, list[str]]:
    """Codes of a unified dictionary column and its values as Python strings."""
    codes = np.concatenate([c.indices.to_numpy(zero_copy_only=False) for c in column.chunks])
    return codes, column.chunk(0).dictionary.to_pylist()
