"""Runs in TREC format: ``qid Q0 item_id rank score tag``.

Ranks are whole numbers and scores finite decimal or exponent numbers, by the grammar
in ``numbers`` that the qrels reader uses too.

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
from operator import itemgetter
from pathlib import Path

from .errors import InputError, UsageError, looks_like
from .ids import is_valid_id
from .files import atomic_write, read_text
from .numbers import SCORE_FORMS, WHOLE_FORMS, parse_score, parse_whole


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
    """Read a TREC run; duplicate (qid, item) entries are errors. A file without lines
    is a run in which no query found anything (a lexical run whose queries share no
    word with the catalogue is written so): it has no results, and scoring says so.

    Plainly written runs are read into columns (``columns.RankedColumns``), a few bytes
    per line; anything else is read line by line, which also locates every error.
    """
    fast = _read_columns(path, name)
    if fast is not None:
        return fast
    text = read_text(path, "run file")
    with _collector_paused():
        return _read_lines(path, text, name)


def _read_columns(path: str | Path, name: str | None) -> Run | None:
    from .columns import read_run_columns

    got = read_run_columns(path)
    if got is None:
        return None
    tag, columns = got
    return Run(name or tag or Path(path).stem, columns)


def _read_lines(path: str | Path, text: str, name: str | None) -> Run:
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
                             f"got {len(parts)}{looks_like(line)}", line=n)
        qid, _, item, rank_s, score_s, t = parts
        score = parse_score(score_s)
        if score is None:
            raise InputError(path, f"score {score_s!r} is not a number trawl reads; write "
                             f"{SCORE_FORMS}", line=n, field="score")
        if parse_whole(rank_s) is None:
            raise InputError(path, f"rank {rank_s!r} is not a whole number; write "
                             f"{WHOLE_FORMS}", line=n, field="rank")
        key = (qid, item)
        if key in first:
            raise InputError(path, f"duplicate entry for query {qid!r}, item {item!r} "
                             f"(first on line {first[key]})", line=n)
        first[key] = n
        per_q.setdefault(qid, {})[item] = score
        tag = tag or t
    if not per_q:
        return Run(name or name_from_path(path), {})
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


def name_from_path(path: str | Path) -> str:
    """A run name from its file name: up to the first dot, spaces as underscores."""
    return "_".join(Path(path).name.split(".")[0].split()) or "run"


def check_run_name(name: str) -> None:
    """Refuse a name that cannot be the tag field of a run line (it must read back as
    one field, the same name)."""
    if is_valid_id(name) and name.isprintable():
        return
    fixed = "".join(c if c.isprintable() and not c.isspace() else "_" for c in name)
    raise UsageError(f"run name {name!r} cannot be the tag of a TREC run line, which must be "
                     f"one field without white space or control characters; use e.g. "
                     f"{(fixed or 'run')!r}")


def write_run(path: str | Path, run: Run) -> None:
    """Write ``run`` as TREC lines; a name or score the readers would refuse is refused
    and nothing is written."""
    check_run_name(run.name)
    with atomic_write(path) as fh:
        for qid, pairs in run.results.items():
            for rank, (item, score) in enumerate(pairs, start=1):
                value = float(score)
                if not math.isfinite(value):
                    raise UsageError(f"run {run.name!r}: query {qid!r}, item {item!r} has "
                                     f"score {value}; run files hold {SCORE_FORMS}")
                fh.write(f"{qid} Q0 {item} {rank} {value!r} {run.name}\n")
