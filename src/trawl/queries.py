"""Queries: TSV ``qid<TAB>text``, one per line."""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path

from .errors import InputError, looks_like
from .files import atomic_write, read_text
from .ids import is_valid_id
from .lookalike import has_visible, visible


def read_queries(path: str | Path) -> dict[str, str]:
    """Read a queries TSV into ``{qid: text}`` in file order.

    Text after the first tab is the query; further tabs inside it become spaces.
    """
    text = read_text(path, "queries file")
    out: dict[str, str] = {}
    first: dict[str, int] = {}
    for n, line in enumerate(text.split("\n"), start=1):
        if not line.strip():
            continue
        if "\x00" in line:
            raise InputError(path, "NUL byte in line; the file is binary or corrupt", line=n)
        if "\t" not in line:
            raise InputError(path, f"expected 'qid<TAB>text', found no tab{looks_like(line)}",
                             line=n)
        qid, q = line.split("\t", 1)
        qid = qid.strip()
        if not qid:
            raise InputError(path, "empty query id", line=n, field="qid")
        if not is_valid_id(qid):
            raise InputError(path, f"query id {qid!r} contains white space", line=n, field="qid")
        q = " ".join(q.replace("\t", " ").split())
        if not q:
            raise InputError(path, f"query {qid!r} has no text", line=n, field="text")
        if not has_visible(q):
            raise InputError(path, f"query {qid!r} has no visible text, only {visible(q)}; "
                             "give it words or remove the line", line=n, field="text")
        if qid in first:
            raise InputError(path, f"duplicate query id {qid!r} (first on line {first[qid]})",
                             line=n, field="qid")
        first[qid] = n
        out[qid] = q
    if not out:
        raise InputError(path, "no queries; expected lines of 'qid<TAB>text'")
    return out


def write_queries(path: str | Path, queries: Mapping[str, str]) -> None:
    with atomic_write(path) as fh:
        for qid, q in queries.items():
            fh.write(f"{qid}\t{' '.join(q.split())}\n")
