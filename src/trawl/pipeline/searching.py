"""Searching one query set with every system, timed the way an app would serve it, and
keeping an earlier evaluation's runs when their inputs are unchanged."""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import UsageError
from ..fusion import RRF_K, reciprocal_rank_fusion
from ..latency import (DEFAULT_WARMUP, fused_throughput, measure_fused, measure_search,
                       use_threads)
from ..runs import Run, write_run
from .outputs import write_json
from .publish import file_stamp
from .reuse import RUN_STAMP, fused_key, previous_search, search_key
from .systems import System

Notify = Callable[[str], None]


@dataclass(frozen=True)
class Searched:
    """Every system's run and latency figures for one query set."""

    runs: Mapping[str, Run]
    latency: Mapping[str, Mapping[str, Any]]
    reused: tuple[str, ...]  # systems whose run and figures came from an earlier evaluation


def search_set(systems: Sequence[System], indexes: Mapping[str, Any],
               queries: Mapping[str, str], folder: Path, depth: int, retime: bool,
               quiet: bool, say: Notify, label: str, threads: int | None = None) -> Searched:
    """Search (timed under ``threads`` compute threads; None: the libraries' defaults)
    with every system in order, fusing from the parts' runs; write each run and its
    latency sidecar into ``folder``. A system whose inputs match an earlier run's
    sidecar keeps that run unless ``retime``."""
    runs: dict[str, Run] = {}
    latency: dict[str, dict[str, Any]] = {}
    keys: dict[str, str] = {}
    reused: list[str] = []
    with use_threads(threads) as in_force:
        for s in systems:
            run_path = folder / f"{s.name}.run"
            keys[s.name] = (search_key(indexes[s.name].manifest, queries, depth, in_force)
                            if s.spec is not None else
                            fused_key([keys[p] for p in s.parts], depth))
            earlier = None if retime else previous_search(
                run_path, s.name, keys[s.name], queries,
                lambda why: say(f"search {label}: {s.name}: {why}; searching again"))
            if earlier is not None:
                say(f"search {label}: {s.name}: reusing {run_path} (same index, queries, "
                    "depth, threads)")
                runs[s.name], latency[s.name] = earlier
                reused.append(s.name)
                continue
            say(f"search {label}: {s.name} ({len(queries)} queries, timed one at a time, "
                f"{in_force} thread(s))")
            run, lat = _search_one(s, indexes, queries, depth, quiet, runs, latency, in_force)
            lat["inputs"] = keys[s.name]
            runs[s.name], latency[s.name] = run, lat
            write_run(run_path, run)
            # the run file's size and checksum, checked before it is reused
            write_json(Path(f"{run_path}.latency.json"), {**lat, RUN_STAMP: file_stamp(run_path)})
    return Searched(runs, latency, tuple(reused))


def _search_one(s: System, indexes: Mapping[str, Any], queries: Mapping[str, str], depth: int,
                quiet: bool, runs: Mapping[str, Run], latency: Mapping[str, Mapping[str, Any]],
                in_force: int) -> tuple[Run, dict[str, Any]]:
    """One system's run and latency figures; a fusion uses its parts' runs and figures."""
    if s.spec is not None:
        run, report = measure_search(indexes[s.name], queries, depth, warmup=DEFAULT_WARMUP,
                                     quiet=quiet, name=s.name, threads=in_force)
        return run, report.as_dict()
    run = reciprocal_rank_fusion([runs[p] for p in s.parts], RRF_K, depth=depth, name=s.name)
    lat = measure_fused([indexes[p] for p in s.parts], s.parts, queries, depth, s.name)
    lat["batch_queries_per_s"] = fused_throughput(
        [latency[p].get("batch_queries_per_s") for p in s.parts])
    lat["threads"] = in_force
    return run, lat


def merge_runs(name: str, runs: Sequence[Run]) -> Run:
    """One run over the queries of several judgment sets (for agreement)."""
    merged: dict[str, tuple] = {}
    for r in runs:
        for qid, ranked in r.results.items():
            if qid in merged and merged[qid] != ranked:
                raise UsageError(f"query id {qid!r} appears in two judgment sets with "
                                 "different results; give the sets distinct query ids")
            merged[qid] = ranked
    return Run(name, merged)
