"""Deployment variants side by side on Cranfield: ONNX Runtime vs torch encoders, and
int8 / binary vector stores vs fp32, as ratios measured in one run.

Goals (deployment-variants issue):
- minilm-onnx single-query p50 <= 0.5x minilm (torch): same queries, one compute thread
  each, timed alternately query by query so machine load hits all encoders alike;
  several passes, the median of the per-pass ratios is the verdict.
- int8 store: bytes <= 0.3x fp32 and nDCG@10 within 0.005 of fp32.
- binary store (codes only): bytes <= 0.05x fp32 and nDCG@10 within 0.01 of fp32 with
  re-scoring (stores.RESCORE_FACTOR candidates per result).

Document vectors come from trawl's embedding cache (TRAWL_CACHE_DIR), so reruns embed
nothing. Load average is printed before and after timing: on a machine busier than its
cores, latency figures are inflated, ratios much less so.

    TRAWL_CACHE_DIR=CACHE .venv/bin/python bench/bench_variants.py [--passes 3]
"""

from __future__ import annotations

import argparse
import os
import subprocess
import tempfile
import time
from pathlib import Path

import numpy as np
from _cranfield import cranfield, verdict

from trawl.embedcache import EmbeddingCache, default_cache_dir, text_key
from trawl.metrics import parse_metrics, score_matrix
from trawl.retrievers import onnx as onnx_runtime
from trawl.retrievers.loading import EncoderLoader
from trawl.retrievers.onnx import OnnxEncoder
from trawl.retrievers.spec import EncoderSpec
from trawl.runs import make_run
from trawl.stores import RESCORE_FACTOR, StoreSettings, load_store, write_store

ENCODERS = ("minilm", "minilm-onnx", "minilm-int8", "minilm-onnx-int8")
K = 100
WARMUP = 10
METRICS = parse_metrics(["ndcg@10", "recall@100"])


def encoder_for(kind: str, loader: EncoderLoader):
    spec = EncoderSpec(kind)
    if "onnx" in kind:
        return OnnxEncoder(spec, loader)
    return loader.encoder(spec)


def document_vectors(encoder, texts: list[str], cache_root: Path) -> np.ndarray:
    """Vectors for ``texts`` through trawl's embedding cache (embedding what it lacks)."""
    keys = [text_key(t) for t in texts]
    with EmbeddingCache(cache_root, encoder.fingerprint) as cache:
        got = cache.get(keys)
        todo = [i for i, k in enumerate(keys) if k not in got]
        for s in range(0, len(todo), 256):
            chunk = todo[s:s + 256]
            vectors = encoder.encode_documents([texts[i] for i in chunk], 32)
            cache.put([keys[i] for i in chunk], vectors)
            got.update(zip([keys[i] for i in chunk], vectors))
    return np.stack([got[k] for k in keys])


def one_thread() -> None:
    import faiss
    import torch

    torch.set_num_threads(1)
    faiss.omp_set_num_threads(1)
    onnx_runtime.set_threads(1)


def all_threads() -> int:
    import faiss
    import torch

    cores = len(os.sched_getaffinity(0))
    torch.set_num_threads(cores)
    faiss.omp_set_num_threads(cores)
    onnx_runtime.set_threads(cores)
    return cores


def time_encoders(encoders: dict, store, texts: list[str], passes: int) -> dict[str, list]:
    """Per pass, each encoder's per-query ms (encode one query + fp32 search), alternating
    encoders query by query (the order rotates each query)."""
    names = list(encoders)
    for q in texts[:WARMUP]:
        for name in names:
            store.search(encoders[name].encode_queries([q], 1), K)
    out: dict[str, list] = {n: [] for n in names}
    for _ in range(passes):
        ms: dict[str, list] = {n: [] for n in names}
        for i, q in enumerate(texts):
            for name in names[i % len(names):] + names[:i % len(names)]:
                start = time.perf_counter_ns()
                store.search(encoders[name].encode_queries([q], 1), K)
                ms[name].append((time.perf_counter_ns() - start) / 1e6)
        for n in names:
            out[n].append(np.asarray(ms[n]))
    return out


def quality(scores: np.ndarray, found: np.ndarray, ids: list[str], qids: list[str],
            qrels) -> np.ndarray:
    run = make_run("bench", {q: [(ids[j], float(s)) for s, j in zip(scores[i], found[i])
                                 if j >= 0] for i, q in enumerate(qids)})
    return score_matrix(qrels, run, METRICS).mean(axis=0)


def load() -> str:
    return " ".join(f"{x:.2f}" for x in os.getloadavg())


def encoder_section(encoders, vectors, qvecs, texts, qids, ids, qrels, passes) -> None:
    fp32 = load_store(*_written(vectors["minilm"], StoreSettings("fp32")))
    print(f"\n1. encoders: single-query latency (encode + exact fp32 search, k={K}), one compute "
          f"thread, {len(texts)} queries x {passes} passes, alternating, {WARMUP} warm-up")
    one_thread()
    print(f"   load average before: {load()}")
    timings = time_encoders(encoders, fp32, texts, passes)
    print(f"   load average after:  {load()}")
    base = [np.median(t) for t in timings["minilm"]]
    print(f"   {'encoder':<18}{'p50 ms':>8}{'p99 ms':>8}{'p50/minilm':>12}{'nDCG@10':>9}"
          f"{'batch q/s':>11}")
    cores = all_threads()
    for name, per_pass in timings.items():
        p50 = float(np.median([np.median(t) for t in per_pass]))
        p99 = float(np.median([np.percentile(t, 99) for t in per_pass]))
        ratio = float(np.median([np.median(t) / b for t, b in zip(per_pass, base)]))
        store = load_store(*_written(vectors[name], StoreSettings("fp32")))
        ndcg = quality(*store.search(qvecs[name], K), ids, qids, qrels)[0]
        start = time.perf_counter()
        store.search(encoders[name].encode_queries(texts, 64), K)
        rate = len(texts) / (time.perf_counter() - start)
        print(f"   {name:<18}{p50:>8.2f}{p99:>8.2f}{ratio:>11.3f}x{ndcg:>9.4f}{rate:>11.1f}")
    onnx = float(np.median([np.median(t) / b for t, b in zip(timings["minilm-onnx"], base)]))
    print(f"   minilm-onnx / minilm p50 = {onnx:.3f}x ({verdict(onnx, 0.5, False)}); "
          f"batch throughput with {cores} threads")


def store_section(x: np.ndarray, q: np.ndarray, qids, ids, qrels) -> None:
    print(f"\n2. vector stores over minilm's Cranfield vectors ({x.shape[0]} x {x.shape[1]}); "
          f"binary re-scores {RESCORE_FACTOR} x depth candidates")
    rows = []
    for settings in (StoreSettings("fp32"), StoreSettings("int8"), StoreSettings("binary"),
                     StoreSettings("binary", "fp32")):
        folder, section = _written(x, settings)
        store = load_store(folder, section)
        at100 = quality(*store.search(q, K), ids, qids, qrels)
        at10 = quality(*store.search(q, 10), ids, qids, qrels)[0]
        one_thread()  # several OpenMP threads for one query only wait on a busy machine
        start = time.perf_counter_ns()
        for row in q:
            store.search(row[None, :], K)
        per_query = (time.perf_counter_ns() - start) / 1e6 / len(q)
        all_threads()
        rows.append((settings.label, section, at100, at10, per_query))
    base = rows[0]
    print(f"   {'store':<13}{'vector bytes':>13}{'ratio':>8}{'on disk':>10}{'nDCG@10':>9}"
          f"{'delta':>8}{'k=10 delta':>11}{'R@100':>7}{'search ms':>10}  (search: one query, "
          "one thread)")
    for label, section, at100, at10, ms in rows:
        ratio = section["vector_bytes"] / base[1]["vector_bytes"]
        print(f"   {label:<13}{section['vector_bytes']:>13,}{ratio:>7.4f}x{section['bytes']:>10,}"
              f"{at100[0]:>9.4f}{at100[0] - base[2][0]:>+8.4f}{at10 - base[3]:>+11.4f}"
              f"{at100[1]:>7.3f}{ms:>10.3f}")
    int8, binary = rows[1], rows[2]
    r8 = int8[1]["bytes"] / base[1]["bytes"]
    rb = binary[1]["vector_bytes"] / base[1]["vector_bytes"]
    d8, db = abs(int8[2][0] - base[2][0]), abs(binary[2][0] - base[2][0])
    print(f"   int8: bytes {r8:.3f}x ({verdict(r8, 0.3, False)}), |nDCG@10 delta| {d8:.4f} "
          f"({'meets' if d8 <= 0.005 else 'MISSES'} goal <= 0.005)")
    print(f"   binary+int8: code bytes {rb:.4f}x ({verdict(rb, 0.05, False)}), |nDCG@10 delta| "
          f"{db:.4f} ({'meets' if db <= 0.01 else 'MISSES'} goal <= 0.01); its int8 re-scoring "
          f"vectors ({binary[1]['rescore_bytes']:,} bytes) are memory-mapped")


_TMP = Path(tempfile.mkdtemp(prefix="bench-variants-"))


def _written(x: np.ndarray, settings: StoreSettings) -> tuple[Path, dict]:
    folder = Path(tempfile.mkdtemp(dir=_TMP))
    return folder, write_store(x, settings, folder)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--passes", type=int, default=3, help="times through the query set")
    args = ap.parse_args()
    cat, queries, qrels = cranfield()
    commit = subprocess.run(["git", "rev-parse", "--short", "HEAD"], capture_output=True,
                            text=True, cwd=Path(__file__).parent).stdout.strip()
    print(f"bench_variants at commit {commit}; {len(os.sched_getaffinity(0))} cores; "
          f"load average {load()}")
    loader = EncoderLoader()
    encoders = {name: encoder_for(name, loader) for name in ENCODERS}
    texts, ids, qids = cat.texts(), cat.ids, list(queries)
    all_threads()
    vectors = {n: document_vectors(e, texts, default_cache_dir()) for n, e in encoders.items()}
    qvecs = {n: e.encode_queries([queries[q] for q in qids], 64) for n, e in encoders.items()}
    encoder_section(encoders, vectors, qvecs, [queries[q] for q in qids], qids, ids, qrels,
                    args.passes)
    all_threads()
    store_section(vectors["minilm"], qvecs["minilm"], qids, ids, qrels)
    print(f"\nload average at the end: {load()}")


if __name__ == "__main__":
    main()
