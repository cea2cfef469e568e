"""Cranfield inputs shared by the retrieval benchmarks (real text of realistic length)."""

from __future__ import annotations

import os
import sys
import time
from pathlib import Path

from trawl.catalogue import Catalogue, load_catalogue
from trawl.judgments import read_qrels
from trawl.queries import read_queries

# README "The Cranfield checks" says how to make it; TRAWL_CRANFIELD_DIR points elsewhere
CRANFIELD = Path(os.environ.get("TRAWL_CRANFIELD_DIR")
                 or Path(__file__).resolve().parents[2] / "shared" / "data" / "cranfield")


def cranfield(items: int | None = None) -> tuple[Catalogue, dict[str, str], dict]:
    """Catalogue (first ``items`` abstracts), queries and qrels; exits if the data is absent."""
    if not (CRANFIELD / "catalogue.jsonl").exists():
        sys.exit(f"Cranfield collection not found at {CRANFIELD}")
    cat = load_catalogue(CRANFIELD / "catalogue.jsonl")
    if items is not None:
        cat = Catalogue(cat.path, cat.items[:items], cat.template)
    return cat, read_queries(CRANFIELD / "queries.tsv"), read_qrels(CRANFIELD / "qrels.txt")


def timed(fn, *args, **kw) -> tuple[float, object]:
    start = time.perf_counter()
    out = fn(*args, **kw)
    return time.perf_counter() - start, out


def verdict(ratio: float, goal: float, higher_is_better: bool) -> str:
    ok = ratio >= goal if higher_is_better else ratio <= goal
    return f"{'meets' if ok else 'MISSES'} goal {'>=' if higher_is_better else '<='} {goal:g}x"
