"""Judgment sets: queries and their judgments, loaded and checked together, and told
apart as human or silver (machine-made) with a line saying how they were made."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from ..errors import InputError
from ..judgments import Qrels, read_qrels
from ..lookalike import near_miss_lines, visible
from ..queries import read_queries
from ..silver import describe_silver, find_provenance


@dataclass(frozen=True)
class JudgmentSet:
    """Queries and their judgments, evaluated together.

    ``silver`` None means: silver when a ``trawl synth`` provenance file
    (``PREFIX.jsonl`` beside ``PREFIX.qrels``) is present, otherwise of unknown origin
    (scored like human judgments but never called human); False declares them human.
    """

    name: str
    queries: Path
    qrels: Path
    label: str = ""
    silver: bool | None = None
    how: str = ""  # how the judgments were made; described automatically when empty


@dataclass(frozen=True)
class LoadedSet:
    """A judgment set read from its files, with its kind and provenance settled."""

    spec: JudgmentSet
    queries: dict[str, str]
    qrels: Qrels
    silver: bool
    how: str
    origin: str  # "silver", "human" (declared) or "unknown" (no provenance, not declared)


def load_set(js: JudgmentSet) -> LoadedSet:
    """Read a set's queries and qrels; every judged query must have its text."""
    queries = read_queries(js.queries)
    qrels = read_qrels(js.qrels)
    missing = [q for q in qrels if q not in queries]
    if missing:
        near = near_miss_lines(missing[:1], queries)
        raise InputError(js.qrels, f"{len(missing)} judged query id(s) have no text in "
                         f"{js.queries}, e.g. {visible(missing[0])}"
                         + (f" ({near[0]})" if near else "")
                         + "; give the queries file that goes with these qrels")
    sidecar = find_provenance(js.qrels)
    silver = js.silver if js.silver is not None else sidecar is not None
    origin = "silver" if silver else "human" if js.silver is False else "unknown"
    if js.how:
        how = js.how
    elif silver and sidecar is not None:
        how = describe_silver(sidecar)
    elif silver:
        how = "machine-made judgments (marked silver when run)"
    else:
        how = "judged by people" if origin == "human" else (
            "origin unknown: no synthesis provenance beside the qrels, and not declared "
            "human judgments")
    return LoadedSet(js, queries, qrels, silver, how, origin)
