"""trawl's per-query overhead on top of a bare encode + faiss search.

Goal (issue 3): at p50, one query through ``Index.search_one`` costs <= 0.5 ms more than
encoding it and running the same faiss exact search by hand.

Two measurements, each timed alternately query by query so machine load hits both alike:

1. overhead: the encoder is taken out of both sides (query vectors computed up front and
   handed back by a look-up encoder), leaving faiss alone vs everything trawl adds (id
   mapping, trec_eval tie order, result tuples, the look-up itself). This isolates the
   sub-millisecond figure the goal is about, even on a busy machine.
2. end to end: ``model.encode([q])`` + faiss vs ``Index.search_one``, for context.

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
from trawl.retrievers.loading import EncoderLoader
from trawl.embedcache import default_cache_dir

K = 100
WARMUP = 10


class LookupEncoder:
    """Hands back precomputed query vectors: encoding costs (almost) nothing."""

    def __init__(self, real, vectors: dict[str, np.ndarray]) -> None:
        self.spec, self.fingerprint, self.vectors = real.spec, real.fingerprint, vectors

    def encode_queries(self, texts, batch_size=32):
        return np.stack([self.vectors[t] for t in texts])


class LookupLoader(EncoderLoader):
    def __init__(self, encoder: LookupEncoder) -> None:
        super().__init__()
        self.lookup = encoder

    def encoder(self, spec):
        return self.lookup


def paired(a, b, texts: list[str], passes: int) -> tuple[np.ndarray, np.ndarray]:
    """Milliseconds of a(q) and b(q), alternating, after a warm-up."""
    for q in texts[:WARMUP]:
        a(q)
        b(q)
    ta, tb = [], []
    for _ in range(passes):
        for q in texts:
            t = time.perf_counter_ns()
            a(q)
            ta.append((time.perf_counter_ns() - t) / 1e6)
            t = time.perf_counter_ns()
            b(q)
            tb.append((time.perf_counter_ns() - t) / 1e6)
    return np.array(ta), np.array(tb)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--items", type=int, default=1400)
    ap.add_argument("--cache-dir", default=None,
                    help="embedding cache (default: trawl's own, so reruns embed nothing)")
    ap.add_argument("--passes", type=int, default=5, help="times through the query set (1.)")
    args = ap.parse_args()
    cat, queries, _ = cranfield(args.items)
    cache = Path(args.cache_dir) if args.cache_dir else default_cache_dir()
    folder = cache / "bench-search-index"
    loader = EncoderLoader()
    build_index(cat, "minilm", folder, cache_dir=cache, quiet=True, loader=loader)
    index = open_index(folder, cat, "minilm", loader=loader)
    model = loader.sentence_transformer(str(model_path()))
    flat = faiss.IndexFlatIP(384)
    flat.add(np.load(folder / "vectors.npy"))
    texts = list(queries.values())
    vectors = dict(zip(texts, index.encoder().encode_queries(texts, 64)))
    lookup = open_index(folder, cat, "minilm", loader=LookupLoader(LookupEncoder(
        index.encoder(), vectors)))

    bare, ours = paired(lambda q: flat.search(vectors[q][None, :], K),
                        lambda q: lookup.search_one(q, K), texts, args.passes)
    overhead = float(np.median(ours) - np.median(bare))
    print(f"per-query search, {len(texts)} Cranfield queries x {args.passes}, {len(cat)} items, "
          f"minilm exact, k={K}, {WARMUP} warm-up excluded")
    print(f"  1. encoder removed: faiss alone p50 {np.median(bare):.3f} ms; trawl p50 "
          f"{np.median(ours):.3f} ms; trawl / faiss = {np.median(ours) / np.median(bare):.2f}x")
    print(f"     trawl's own overhead at p50 = {overhead:.3f} ms "
          f"({'meets' if overhead <= 0.5 else 'MISSES'} goal <= 0.5 ms)")

    bare, ours = paired(
        lambda q: flat.search(model.encode([q], normalize_embeddings=True,
                                           convert_to_numpy=True), K),
        lambda q: index.search_one(q, K), texts, 1)
    print(f"  2. end to end: encode + faiss p50 {np.median(bare):.3f} ms, trawl search_one p50 "
          f"{np.median(ours):.3f} ms; trawl / bare = {np.median(ours) / np.median(bare):.3f}x")


if __name__ == "__main__":
    main()
