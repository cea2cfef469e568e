"""HNSW graphs over fp32 and int8 vectors against exact search, side by side on Cranfield.

For each of exact/fp32 (the reference), exact/int8, hnsw/fp32 and hnsw/int8, built by
trawl from the same cached minilm vectors: index bytes, recall@10 against the reference,
nDCG@10 under Cranfield's judgments, and search time per query with the query vectors
computed up front (encoding is the same for all four and would hide the search), one
compute thread, the four timed alternately query by query so machine load hits them
alike. Ratios are against the reference in the same run. At Cranfield's 1,400 items an
exact scan is already fast; the graph's time advantage grows with the catalogue, its
size and recall figures do not depend on it much.

    TRAWL_CACHE_DIR=CACHE .venv/bin/python bench/bench_hnsw.py [--passes 5]
"""

from __future__ import annotations

import argparse
import os
import tempfile
import time
from pathlib import Path

import faiss
import numpy as np
from _cranfield import cranfield
from bench_search import WARMUP, LookupEncoder, LookupLoader

from trawl.embedcache import default_cache_dir
from trawl.index import build_index, open_index
from trawl.metrics import parse_metrics, score_matrix
from trawl.retrievers.loading import EncoderLoader
from trawl.stores import StoreSettings

VARIANTS = (("exact", "fp32"), ("exact", "int8"), ("hnsw", "fp32"), ("hnsw", "int8"))
NDCG = parse_metrics(["ndcg@10"])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--passes", type=int, default=5, help="times through the query set")
    args = ap.parse_args()
    cat, queries, qrels = cranfield()
    cache = default_cache_dir()
    loader = EncoderLoader()
    faiss.omp_set_num_threads(1)
    print(f"load average before: {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores")
    with tempfile.TemporaryDirectory() as tmp:
        indexes = {}
        for ann, store in VARIANTS:
            folder = Path(tmp) / f"{ann}-{store}"
            build_index(cat, "minilm", folder, ann=ann, store=StoreSettings(store),
                        cache_dir=cache, quiet=True, loader=loader)
            indexes[(ann, store)] = folder
        real = open_index(indexes[VARIANTS[0]], cat, "minilm", loader=loader).encoder()
        texts = list(queries.values())
        lookup = LookupLoader(LookupEncoder(real, dict(zip(texts, real.encode_queries(texts)))))
        opened = {v: open_index(f, cat, "minilm", loader=lookup,
                                store=StoreSettings(v[1])) for v, f in indexes.items()}
        runs = {v: ix.search(queries, k=10, quiet=True) for v, ix in opened.items()}
        times = {v: [] for v in VARIANTS}
        for q in texts[:WARMUP]:
            for ix in opened.values():
                ix.search_one(q, 10)
        for _ in range(args.passes):
            for q in texts:
                for v, ix in opened.items():
                    t = time.perf_counter_ns()
                    ix.search_one(q, 10)
                    times[v].append((time.perf_counter_ns() - t) / 1e6)
    print(f"load average after: {os.getloadavg()[0]:.2f}")
    ref = VARIANTS[0]
    judged = {q: g for q, g in qrels.items() if q in queries}

    def recall(v) -> float:
        return float(np.mean([len({i for i, _ in runs[v].results[q]}
                                  & {i for i, _ in runs[ref].results[q]}) / 10
                              for q in queries]))

    print(f"\n{'variant':<12} {'bytes':>10} {'x ref':>6} {'recall@10':>10} {'ndcg@10':>8} "
          f"{'p50 ms':>7} {'x ref':>6}")
    p50_ref = float(np.median(times[ref]))
    for v in VARIANTS:
        size, p50 = opened[v].bytes, float(np.median(times[v]))
        ndcg = float(score_matrix(judged, runs[v], NDCG)[:, 0].mean())
        print(f"{v[0] + '/' + v[1]:<12} {size:>10,} {size / opened[ref].bytes:>6.2f} "
              f"{recall(v):>10.4f} {ndcg:>8.4f} {p50:>7.3f} {p50 / p50_ref:>6.2f}")


if __name__ == "__main__":
    main()
