"""trawl's per-query overhead on top of a bare encode + faiss search.

Goal (issue 3): at p50, one query through ``Index.search_one`` costs <= 0.5 ms more than
the same model's ``encode([query])`` followed by the same faiss exact search. The two are
timed alternately, query by query, so machine load hits both alike; the overhead is the
median of the per-query differences.

    .venv/bin/python bench/bench_search.py [--items 1400] [--cache-dir DIR]
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import faiss
import numpy as np
from _cranfield import cranfield

from trawl.bundled import model_path
from trawl.index import build_index, open_index
from trawl.retrievers import EncoderLoader
from trawl.retrievers.cache import default_cache_dir

K = 100
WARMUP = 10


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--items", type=int, default=1400)
    ap.add_argument("--cache-dir", default=None,
                    help="embedding cache (default: trawl's own, so reruns embed nothing)")
    ap.add_argument("--passes", type=int, default=2, help="times through the query set")
    args = ap.parse_args()
    cat, queries, _ = cranfield(args.items)
    cache = Path(args.cache_dir) if args.cache_dir else default_cache_dir()
    loader = EncoderLoader()
    folder = cache / "bench-search-index"
    build_index(cat, "minilm", folder, cache_dir=cache, quiet=True, loader=loader)
    index = open_index(folder, cat, "minilm", loader=loader)
    model = loader.sentence_transformer(str(model_path()))
    flat = faiss.IndexFlatIP(384)
    flat.add(np.load(folder / "vectors.npy"))

    def bare(q: str) -> None:
        flat.search(model.encode([q], normalize_embeddings=True, convert_to_numpy=True), K)

    texts = list(queries.values())
    for q in texts[:WARMUP]:
        bare(q)
        index.search_one(q, K)
    ref, ours = [], []
    for _ in range(args.passes):
        for q in texts:
            t = time.perf_counter_ns()
            bare(q)
            ref.append((time.perf_counter_ns() - t) / 1e6)
            t = time.perf_counter_ns()
            index.search_one(q, K)
            ours.append((time.perf_counter_ns() - t) / 1e6)
    ref_a, ours_a = np.array(ref), np.array(ours)
    overhead = float(np.median(ours_a - ref_a))
    print(f"per-query latency, {len(texts)} Cranfield queries x {args.passes}, "
          f"{len(cat)} items, minilm exact, k={K}, {WARMUP} warm-up excluded")
    print(f"  bare encode + faiss: p50 {np.median(ref_a):.3f} ms, p95 {np.percentile(ref_a, 95):.3f}")
    print(f"  trawl search_one:    p50 {np.median(ours_a):.3f} ms, p95 {np.percentile(ours_a, 95):.3f}")
    print(f"  trawl / bare at p50 = {np.median(ours_a) / np.median(ref_a):.3f}x; overhead "
          f"(median paired difference) = {overhead:.3f} ms "
          f"({'meets' if overhead <= 0.5 else 'MISSES'} goal <= 0.5 ms)")


if __name__ == "__main__":
    main()
