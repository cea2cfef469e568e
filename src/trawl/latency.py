"""Latency and throughput of an index, measured the way an app would serve it.

Per-query latency is encode + search of one query at a time (a search box sends one
query per request), after a few warm-up queries that are not counted (first calls pay
for lazy model loading, allocator growth and cold caches). Batch throughput is the
whole query set through ``Index.search``. The run returned is the batch run. A fused
system is timed by the same loop, serving each query by searching every part in turn
and fusing, as a simple service would.

Per-query latency runs with one compute thread by default (``SINGLE_QUERY_THREADS``):
an app replica on a shared machine serves one request per core, and on a busy machine
extra threads wait for a core and inflate latency more than they help. Batch throughput
uses every core, as an offline job would. The load average before and after timing is
recorded, and ``busy`` says when the machine was busier than its cores (figures inflated).
"""

from __future__ import annotations

import os
import platform
import time
from collections.abc import Callable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from .errors import UsageError
from .fusion import RRF_K, reciprocal_rank_fusion
from .index.manifest import store_summary
from .runs import Run, check_run_name

if TYPE_CHECKING:
    from .index import Index

DEFAULT_WARMUP = 5
DEFAULT_RESULTS = 100  # results per query a search keeps unless told
PERCENTILE_METHOD = "linear"  # numpy's default interpolation, stated in the sidecar
SINGLE_QUERY_THREADS = 1


@dataclass(frozen=True)
class LatencyReport:
    """What ``RUN.latency.json`` holds."""

    index: str
    encoder: str
    ann: str
    k: int
    queries_timed: int
    warmup: int
    p50_ms: float
    p95_ms: float
    p99_ms: float
    mean_ms: float
    batch_queries: int
    batch_seconds: float
    batch_queries_per_s: float
    index_bytes: int
    items: int
    bytes_per_item: float
    cpu: str
    threads: int                    # compute threads while timing single queries
    batch_threads: int = 0          # compute threads for the batch (every core)
    cores: int = 0                  # CPUs this process may use
    load_before: tuple[float, ...] = ()   # 1, 5, 15-minute load average before timing
    load_after: tuple[float, ...] = ()
    store: str = "fp32"             # how the index keeps vectors (stores.StoreSettings.label)
    vector_bytes: int = 0           # bytes of the vectors (codes) searched
    # queries longer than the encoder's window (window.Truncation.as_dict); None: no window
    queries_over_window: Mapping[str, int] | None = None

    @property
    def busy(self) -> bool:
        return machine_busy(self.load_before, self.load_after, self.cores)

    def as_dict(self) -> dict[str, Any]:
        out = dict(self.__dict__)
        out.update(load_before=list(self.load_before), load_after=list(self.load_after),
                   busy=self.busy)
        out["method"] = (f"per-query: encode + search of one query at a time with "
                         f"{self.threads} compute thread(s), {self.warmup} warm-up queries "
                         f"excluded; percentiles ({PERCENTILE_METHOD}) over "
                         f"{self.queries_timed} queries; batch: all queries through one "
                         f"search call with {self.batch_threads} thread(s)")
        return out


def load_average() -> tuple[float, ...]:
    """The 1, 5 and 15-minute load averages (empty where the system does not say)."""
    try:
        return tuple(round(x, 2) for x in os.getloadavg())
    except OSError:
        return ()


def machine_busy(before: Sequence[float], after: Sequence[float], cores: int) -> bool:
    """More runnable work than cores (1-minute load) before or after timing: latency
    figures are then inflated by waiting for a core."""
    loads = [x[0] for x in (before, after) if x]
    return bool(cores) and any(load > cores for load in loads)


def all_cores() -> int:
    return len(os.sched_getaffinity(0))


def time_queries(serve: Callable[[str, str], object], queries: Mapping[str, str],
                 warmup: int = DEFAULT_WARMUP) -> list[float]:
    """The one timing loop: ``warmup`` calls of ``serve(qid, text)`` that are not counted
    (cycling through the queries), then every query served alone; milliseconds each."""
    items = list(queries.items())
    if not items:
        raise UsageError("no queries to time")
    for i in range(warmup):
        serve(*items[i % len(items)])
    per_query = []
    for qid, text in items:
        start = time.perf_counter_ns()
        serve(qid, text)
        per_query.append((time.perf_counter_ns() - start) / 1e6)
    return per_query


def percentiles(per_query: Sequence[float]) -> dict[str, float]:
    """p50, p95, p99 and mean of per-query milliseconds, rounded to 4 decimals."""
    ms = np.asarray(per_query, dtype=np.float64)
    return {"p50_ms": _round(np.percentile(ms, 50)), "p95_ms": _round(np.percentile(ms, 95)),
            "p99_ms": _round(np.percentile(ms, 99)), "mean_ms": _round(ms.mean())}


def measure_search(index: Index, queries: Mapping[str, str], k: int | None = None,
                   warmup: int = DEFAULT_WARMUP, quiet: bool = True,
                   name: str | None = None, threads: int | None = SINGLE_QUERY_THREADS
                   ) -> tuple[Run, LatencyReport]:
    """Batch run plus latency figures for ``queries`` against ``index``: single queries
    timed under ``threads`` compute threads (None: whatever is in force), the batch with
    every core. ``k`` results per query (None: ``DEFAULT_RESULTS``, or every item of a
    smaller catalogue); a ``k`` above the catalogue's size is an error naming it."""
    if warmup < 0:
        raise UsageError(f"warm-up count {warmup} must be >= 0")
    if name is not None:
        check_run_name(name)  # before the work, not when the run is written
    k = min(DEFAULT_RESULTS, len(index)) if k is None else k
    index.check_k(k)
    if not queries:
        raise UsageError("no queries to time")
    load_before = load_average()
    with use_threads(threads) as in_force:
        per_query = time_queries(lambda _qid, text: index.search_one(text, k), queries, warmup)
    with use_threads(all_cores()) as batch_threads:
        start = time.perf_counter()
        run = index.search(queries, k, quiet=quiet, name=name)
        batch_seconds = time.perf_counter() - start
    load_after = load_average()
    size = index.bytes
    report = LatencyReport(
        index=str(index.path), encoder=str(index.spec), ann=index.manifest["search"]["ann"],
        k=k, queries_timed=len(per_query), warmup=warmup, **percentiles(per_query),
        batch_queries=len(queries), batch_seconds=_round(batch_seconds),
        batch_queries_per_s=_round(len(queries) / batch_seconds) if batch_seconds > 0 else 0.0,
        index_bytes=size, items=len(index), bytes_per_item=_round(size / len(index)),
        cpu=cpu_model(), threads=in_force, batch_threads=batch_threads, cores=all_cores(),
        load_before=load_before, load_after=load_after, **store_summary(index.manifest),
        queries_over_window=_over_window(index, queries))
    return run, report


def _over_window(index: Index, queries: Mapping[str, str]) -> dict[str, int] | None:
    from .window import count_truncated

    found = count_truncated(list(queries.values()), index.spec, index.spec.query_prefix)
    return None if found is None else found.as_dict()


def measure_fused(indexes: Sequence[Index], names: Sequence[str], queries: Mapping[str, str],
                  k: int, name: str, warmup: int = DEFAULT_WARMUP) -> dict[str, Any]:
    """Latency of a fused system served one query at a time: every part searched in
    turn, then fused (the parts run one after the other, as a simple service would).
    Timed under the thread count in force; the caller adds throughput and threads."""

    def serve(qid: str, text: str) -> None:
        runs = [Run(n, {qid: ix.search_one(text, k)}) for n, ix in zip(names, indexes)]
        reciprocal_rank_fusion(runs, RRF_K, depth=k, name=name)

    load_before = load_average()
    per_query = time_queries(serve, queries, warmup)
    load_after = load_average()
    out: dict[str, Any] = percentiles(per_query)
    out.update(queries_timed=len(per_query), warmup=warmup, k=k, cores=all_cores(),
               load_before=list(load_before), load_after=list(load_after),
               busy=machine_busy(load_before, load_after, all_cores()),
               method=f"per-query: search of each part ({', '.join(names)}) one query at a "
                      f"time, then Reciprocal Rank Fusion (k={RRF_K}); {warmup} warm-up "
                      "queries excluded")
    return out


def fused_throughput(part_rates: Sequence[float | None]) -> float:
    """Batch throughput of a fusion from its parts' (queries per second): the parts'
    batch times add up (fusion itself is negligible next to them)."""
    seconds = sum(1 / rate for rate in part_rates if rate)
    return round(1 / seconds, 4) if seconds > 0 else 0.0


def _round(x: float) -> float:
    return round(float(x), 4)


def cpu_model() -> str:
    try:
        with open("/proc/cpuinfo", encoding="utf-8") as fh:
            for line in fh:
                if line.startswith("model name"):
                    return line.split(":", 1)[1].strip()
    except OSError:
        pass
    return platform.processor() or platform.machine()


def compute_threads() -> int:
    """Threads torch uses for encoding (the dominant cost), else the CPUs we may use."""
    try:
        import torch

        return torch.get_num_threads()
    except ImportError:
        return len(os.sched_getaffinity(0))


def check_threads(threads: int | None) -> None:
    """Refuse a thread count below 1 before any work starts."""
    if threads is not None and threads < 1:
        raise UsageError(f"threads={threads} must be >= 1; give 1 or more (default "
                         f"{SINGLE_QUERY_THREADS}: one compute thread per query)")


@contextmanager
def use_threads(threads: int | None) -> Iterator[int]:
    """Run the block with ``threads`` compute threads in torch (encoding), onnxruntime
    (ONNX encoders) and faiss (search), restoring the counts afterwards; yields the count
    in force. None changes nothing, so the libraries' defaults apply."""
    check_threads(threads)
    if threads is None:
        yield compute_threads()
        return
    import faiss
    import torch

    from .retrievers import onnx as onnx_runtime

    before = torch.get_num_threads(), faiss.omp_get_max_threads()
    onnx_before = onnx_runtime.set_threads(threads)
    torch.set_num_threads(threads)
    faiss.omp_set_num_threads(threads)
    try:
        yield torch.get_num_threads()
    finally:
        torch.set_num_threads(before[0])
        faiss.omp_set_num_threads(before[1])
        onnx_runtime.set_threads(onnx_before)


def write_latency(run_path: str | Path, report: LatencyReport) -> Path:
    """Write ``report`` beside its run as ``RUN.latency.json``; returns that path."""
    import json

    from .files import write_text_atomic

    sidecar = Path(f"{run_path}.latency.json")
    write_text_atomic(sidecar, json.dumps(report.as_dict(), indent=2) + "\n")
    return sidecar
