"""Runs in TREC format: ``qid Q0 item_id rank score tag``.

Ranking order everywhere in trawl is the one trec_eval uses: score descending, ties
broken by item id descending. Runs we write list items in that order, so a file's
rank column and its scores never disagree.
"""

from __future__ import annotations

import contextlib
import gc
import math
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass
from operator import itemgetter, ne
from pathlib import Path

from .errors import InputError
from .files import atomic_write, read_text


@dataclass(frozen=True)
class Run:
    """Ranked results per query: ``results[qid]`` is a tuple of (item_id, score), best first."""

    name: str
    results: Mapping[str, tuple[tuple[str, float], ...]]

    def __len__(self) -> int:
        return len(self.results)


def rank_order(pairs: Iterable[tuple[str, float]]) -> tuple[tuple[str, float], ...]:
    """Sort (item, score) pairs as trec_eval does: score desc, then item id desc."""
    return tuple(sorted(pairs, key=itemgetter(1, 0), reverse=True))


def make_run(name: str, results: Mapping[str, Iterable[tuple[str, float]]]) -> Run:
    return Run(name, {q: rank_order(pairs) for q, pairs in results.items()})


def read_run(path: str | Path, name: str | None = None) -> Run:
    """Read a TREC run; duplicate (qid, item) entries are errors."""
    text = read_text(path, "run file")
    with _collector_paused():
        fast = _read_well_formed_run(path, text, name)
    if fast is not None:
        return fast
    per_q: dict[str, dict[str, float]] = {}
    first: dict[tuple[str, str], int] = {}
    tag = None
    for n, line in enumerate(text.split("\n"), start=1):
        parts = line.split()
        if not parts:
            continue
        if "\x00" in line:
            raise InputError(path, "NUL byte in line; the file is binary or corrupt", line=n)
        if len(parts) != 6:
            raise InputError(path, f"expected 6 fields 'qid Q0 item_id rank score tag', "
                             f"got {len(parts)}", line=n)
        qid, _, item, rank_s, score_s, t = parts
        try:
            score = float(score_s)
        except ValueError:
            raise InputError(path, f"score {score_s!r} is not a number", line=n,
                             field="score") from None
        if math.isnan(score):
            raise InputError(path, "score is NaN", line=n, field="score")
        try:
            int(rank_s)
        except ValueError:
            raise InputError(path, f"rank {rank_s!r} is not a whole number", line=n,
                             field="rank") from None
        key = (qid, item)
        if key in first:
            raise InputError(path, f"duplicate entry for query {qid!r}, item {item!r} "
                             f"(first on line {first[key]})", line=n)
        first[key] = n
        per_q.setdefault(qid, {})[item] = score
        tag = tag or t
    if not per_q:
        raise InputError(path, "run is empty; expected lines of 'qid Q0 item_id rank score tag'")
    return make_run(name or tag or Path(path).stem, {q: d.items() for q, d in per_q.items()})


@contextlib.contextmanager
def _collector_paused() -> Iterator[None]:
    """Pause Python's cyclic garbage collector while building many small tuples.

    Hundreds of thousands of new (item, score) tuples trigger repeated collections
    that can find nothing (tuples of strings and floats hold no cycles); pausing them
    saves a fifth of the reading time of a large run.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


CHUNK_CHARS = 1 << 20  # text tokenised at a time: bounds the memory held in small strings


def _six_fields_per_line(chunk: str) -> bool:
    """Every line of an ASCII chunk is blank or has 6 fields, and the only control
    characters are tab and newline (so the fields are what str.split() yields)."""
    import numpy as np

    data = np.frombuffer(chunk.encode("ascii"), dtype=np.uint8)
    newline = np.flatnonzero(data == 10)
    if np.count_nonzero(data < 32) != newline.size + chunk.count("\t"):
        return False
    space = data <= 32  # only space, tab and newline are left at or below 32
    token_start = ~space
    token_start[1:] &= space[:-1]
    starts_at = np.flatnonzero(token_start)
    tokens_before_newline = np.searchsorted(starts_at, newline)
    fields_per_line = np.diff(np.concatenate(([0], tokens_before_newline, [starts_at.size])))
    return bool(np.all((fields_per_line == 0) | (fields_per_line == 6)))


def _read_well_formed_run(path: str | Path, text: str, name: str | None) -> Run | None:
    """The common case of ``read_run`` without a Python loop per line, or None.

    Tokenising a megabyte at a time plus array checks is several times faster on runs
    of hundreds of thousands of lines. Anything unusual (non-ASCII text, control
    characters other than tab and newline, a line without 6 fields, a rank that is not
    plain digits, an unparseable or NaN score, a query whose lines are not contiguous, a
    duplicate item) returns None, and the line-by-line reader above produces the result
    or the located error.
    """
    import numpy as np

    if not text.isascii():
        return None
    qids: list[str] = []
    items: list[str] = []
    scores: list[float] = []
    tag = ""
    start = 0
    while start < len(text):
        end = text.find("\n", start + CHUNK_CHARS)
        end = len(text) if end < 0 else end + 1
        chunk = text[start:end]
        start = end
        if not _six_fields_per_line(chunk):
            return None
        tokens = chunk.split()
        if not "".join(tokens[3::6]).isdecimal():  # int() takes exactly these, unsigned
            return None
        try:
            scores += map(float, tokens[4::6])
        except ValueError:
            return None
        qids += tokens[0::6]
        items += tokens[2::6]
        tag = tag or (tokens[5] if tokens else "")
    if not qids:
        return None
    values = np.array(scores, dtype=np.float64)
    if np.isnan(values).any():
        return None
    n = len(qids)
    new_query = np.ones(n, dtype=bool)
    new_query[1:] = np.fromiter(map(ne, qids[1:], qids[:-1]), dtype=bool, count=n - 1)
    starts = np.flatnonzero(new_query).tolist()
    bounds = list(zip(starts, starts[1:] + [n]))
    if len({qids[a] for a in starts}) != len(starts):
        return None  # a query's lines are not contiguous
    if any(len(set(items[a:b])) != b - a for a, b in bounds):
        return None  # a duplicate item
    # trec_eval order within a query: score descending, ties by item id descending.
    # Runs are nearly always written by score; equal scores are put in order here, and
    # only a query whose scores ever rise down the list is sorted as a whole.
    rising = np.flatnonzero(~new_query[1:] & (values[1:] > values[:-1])) + 1
    tied = np.zeros(n + 1, dtype=bool)
    tied[1:n] = ~new_query[1:] & (values[1:] == values[:-1])
    edges = np.flatnonzero(tied[1:] != tied[:-1]) + 1  # tied runs span [edge - 1, next edge)
    for first, last in zip(edges[0::2].tolist(), edges[1::2].tolist()):
        items[first - 1:last] = sorted(items[first - 1:last], reverse=True)
    unsorted = set(np.searchsorted(starts, rising, side="right").tolist())
    results: dict[str, tuple[tuple[str, float], ...]] = {}
    for g, (a, b) in enumerate(bounds, start=1):
        pairs = zip(items[a:b], scores[a:b])
        results[qids[a]] = rank_order(pairs) if g in unsorted else tuple(pairs)
    return Run(name or tag or Path(path).stem, results)


def write_run(path: str | Path, run: Run) -> None:
    with atomic_write(path) as fh:
        for qid, pairs in run.results.items():
            for rank, (item, score) in enumerate(pairs, start=1):
                fh.write(f"{qid} Q0 {item} {rank} {float(score)!r} {run.name}\n")
