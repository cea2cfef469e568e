"""Scale: a generated 200,000-item catalogue with the static encoder, end to end.

Goals (issue 8): an index build's peak memory <= 2x the vector bytes + the model size;
figures for build time, search throughput on 10,000 queries, and `trawl score` /
`trawl compare` on 100,000 queries. Not a test: it takes minutes.

Every step runs in a fresh child process (this script with ``--step``) that reports its
own memory from /proc/self/status: RSS at checkpoints and the peak (VmHWM, reset through
/proc/self/clear_refs before each phase), so the figures do not mix. Each step also
times a bare reference in the same child, and the ratios are what travel between
machines:

- build:   model2vec ``encode`` of the same texts + ``np.save`` (the least any indexer does)
- search:  the same query encoding + one faiss ``IndexFlatIP.search`` over the vectors
- score:   ir_measures on the same files (nDCG@10, RR@10, R@100)
- compare: `trawl score` of the same runs (what the bootstrap and sign-flip tests add)

    .venv/bin/python bench/bench_scale.py [--items 200000] [--queries 10000]
        [--score-queries 100000] [--depth 100] [--static DIR] [--work DIR]

Without --static a static model is distilled once into the trawl cache folder
(``bench-static-256``) and reused by later runs.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

WORDS_PER_ITEM = (20, 80)  # help-centre entries: a title and a paragraph or two
QUERY_WORDS = (2, 6)
TYPES = ("article", "faq", "screen", "form")
MB = 1 << 20


# --- memory probes (Linux /proc) ----------------------------------------------------------------

def status_kb(field: str) -> int:
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith(field + ":"):
            return int(line.split()[1])
    raise RuntimeError(f"{field} not in /proc/self/status")


def rss() -> int:
    return status_kb("VmRSS") * 1024


class PeakMeter:
    """Peak RSS per phase (VmHWM, which writing 5 to /proc/self/clear_refs resets to the
    current RSS) and over the whole process (the largest phase peak seen)."""

    def __init__(self) -> None:
        self.overall = self.peak()

    @staticmethod
    def peak() -> int:
        return status_kb("VmHWM") * 1024

    def reset(self) -> None:
        self.overall = max(self.overall, self.peak())
        Path("/proc/self/clear_refs").write_text("5")

    def total(self) -> int:
        return max(self.overall, self.peak())


def mb(n: float) -> str:
    return f"{n / MB:,.0f} MB"


# --- inputs ---------------------------------------------------------------------------------------

def vocabulary() -> list[str]:
    from wordfreq import top_n_list

    return [w for w in top_n_list("en", 6000) if w.isalpha()][:5000]


def write_catalogue(path: Path, items: int, seed: int = 0) -> None:
    """Items with Zipf-distributed words (like real text), written in blocks."""
    rng = np.random.default_rng(seed)
    words = np.array(vocabulary())
    weights = 1 / np.arange(1, len(words) + 1)
    weights /= weights.sum()
    with path.open("w", encoding="utf-8") as fh:
        for start in range(0, items, 10_000):
            lines = []
            for i in range(start, min(items, start + 10_000)):
                n = int(rng.integers(*WORDS_PER_ITEM))
                w = words[rng.choice(len(words), size=n, p=weights)]
                lines.append(json.dumps({"id": f"it{i:06d}", "type": TYPES[i % len(TYPES)],
                                         "title": " ".join(w[:6]), "text": " ".join(w[6:])}))
            fh.write("\n".join(lines) + "\n")


def write_queries(path: Path, n: int, seed: int = 1) -> None:
    rng = np.random.default_rng(seed)
    words = vocabulary()[:3000]
    with path.open("w", encoding="utf-8") as fh:
        for q in range(n):
            k = int(rng.integers(*QUERY_WORDS))
            fh.write(f"q{q}\t{' '.join(words[j] for j in rng.integers(0, len(words), k))}\n")


def write_judged_runs(folder: Path, queries: int, depth: int, items: int,
                      seed: int = 2) -> tuple[Path, list[Path]]:
    """qrels (one grade-2 and up to two grade-1 items per query) and two runs of
    ``depth`` results; relevant items come from the upper half of the ids and the
    others from the lower half, so no run lists an item twice."""
    rng = np.random.default_rng(seed)
    half = items // 2
    ids = [f"it{i:06d}" for i in range(items)]
    n_rel = rng.integers(1, 4, size=queries)
    base = rng.integers(0, items - half, size=queries)
    rel = half + (base[:, None] + np.arange(3)) % (items - half)  # distinct per query
    qrels = folder / "scale.qrels"
    with qrels.open("w") as fh:
        for q in range(queries):
            fh.write("".join(f"q{q} 0 {ids[rel[q, j]]} {2 if j == 0 else 1}\n"
                             for j in range(n_rel[q])))
    runs = []
    for r, hit_rate in enumerate((0.55, 0.65)):
        perm = rng.permutation(half)[:depth]
        path = folder / f"run{r}.run"
        with path.open("w") as fh:
            for start in range(0, queries, 5000):
                lines = []
                for q in range(start, min(queries, start + 5000)):
                    row = (perm + q) % half
                    for j in range(n_rel[q]):
                        if rng.random() < hit_rate:
                            row[int(rng.integers(0, depth))] = rel[q, j]
                    scores = np.round(np.sort(rng.random(depth))[::-1], 4).tolist()
                    lines += [f"q{q} Q0 {ids[i]} {k} {s:.4f} sys{r}\n"
                              for k, (i, s) in enumerate(zip(row.tolist(), scores), start=1)]
                fh.write("".join(lines))
        runs.append(path)
    return qrels, runs


def static_model(given: str | None) -> Path:
    if given:
        return Path(given)
    from trawl.embedcache import default_cache_dir
    from trawl.distill import distill_static

    folder = default_cache_dir() / "bench-static-256"
    if not (folder / "config.json").is_file():
        print(f"distilling a static model into {folder} (once) ...", flush=True)
        distill_static(folder, quiet=True)
    return folder


# --- child steps -----------------------------------------------------------------------------

def step_build(a: dict) -> dict:
    import trawl.index.build as index_mod
    from trawl.catalogue import load_catalogue
    from trawl.retrievers.loading import EncoderLoader
    from trawl.retrievers.spec import parse_spec

    meter = PeakMeter()
    out: dict = {"rss_start": rss()}
    t = time.perf_counter()
    cat = load_catalogue(a["catalogue"])
    out["load_s"] = time.perf_counter() - t
    out["rss_catalogue"] = rss()
    spec = f"static:{a['model']}"
    loader = EncoderLoader()
    encoder = loader.encoder(parse_spec(spec))
    encoder.encode_documents(["warm up"], 1)
    out["rss_model"] = rss()

    phases: dict[str, dict] = {}
    original_embed, original_write = index_mod._embed, index_mod._write_dense

    def watched(name, fn):
        def run(*args, **kw):
            before = rss()
            meter.reset()
            result = fn(*args, **kw)
            phases[name] = {"rss_before": before, "peak": meter.peak(), "rss_after": rss()}
            return result
        return run

    index_mod._embed = watched("embed", original_embed)
    index_mod._write_dense = watched("write", original_write)
    meter.reset()
    before = rss()
    t = time.perf_counter()
    info = index_mod.build_index(cat, spec, a["index"], cache_dir=a["cache"], quiet=True,
                                 loader=loader)
    out["build_s"] = time.perf_counter() - t
    out["build_peak"] = meter.total()  # the process's peak RSS up to the end of the build
    out["build_rss_before"] = before
    out["phases"] = phases
    out["dim"], out["items"], out["index_bytes"] = info.dim, info.items, info.bytes
    index_mod._embed, index_mod._write_dense = original_embed, original_write

    t = time.perf_counter()  # the same catalogue again: every vector from the cache
    again = index_mod.build_index(cat, spec, a["index"], cache_dir=a["cache"], quiet=True,
                                  loader=loader)
    out["rebuild_s"] = time.perf_counter() - t
    out["rebuild_reused"] = again.reused

    model = loader.model("static", str(Path(a["model"]).resolve()), lambda: None)
    meter.reset()
    before = rss()
    t = time.perf_counter()
    texts = cat.texts()
    vectors = model.encode(texts, batch_size=1024, show_progress_bar=False,
                           use_multiprocessing=False)
    np.save(Path(a["work"]) / "bare.npy", vectors.astype(np.float32))
    out["bare_s"] = time.perf_counter() - t
    out["bare_peak_above"] = meter.peak() - before
    return out


def step_search(a: dict) -> dict:
    import faiss

    from trawl.catalogue import load_catalogue
    from trawl.index import open_index
    from trawl.queries import read_queries

    queries = read_queries(a["queries"])
    cat = load_catalogue(a["catalogue"])
    out: dict = {"rss_start": rss()}
    t = time.perf_counter()
    index = open_index(a["index"], cat, f"static:{a['model']}")
    encoder = index.encoder()
    encoder.encode_queries(["warm up"], 64)
    out["open_s"] = time.perf_counter() - t
    out["rss_open"] = rss()
    warm = dict(list(queries.items())[:200])
    index.search(warm, k=a["k"], quiet=True)
    meter = PeakMeter()
    meter.reset()
    before = rss()
    t = time.perf_counter()
    run = index.search(queries, k=a["k"], quiet=True)
    out["search_s"] = time.perf_counter() - t
    out["search_peak_above"] = meter.peak() - before
    out["results"] = sum(len(p) for p in run.results.values())

    vectors = np.load(Path(a["index"]) / "vectors.npy")
    flat = faiss.IndexFlatIP(vectors.shape[1])
    flat.add(vectors)
    texts = list(queries.values())
    t = time.perf_counter()
    for s in range(0, len(texts), 64):  # the batch size trawl searches with
        flat.search(encoder.encode_queries(texts[s:s + 64], 64), a["k"])
    out["bare_s"] = time.perf_counter() - t
    out["queries"] = len(queries)
    return out


def step_cli(a: dict) -> dict:
    """One trawl CLI command (score or compare) or the ir_measures reference, timed."""
    import resource

    argv = a["argv"]
    t = time.perf_counter()
    cpu0 = resource.getrusage(resource.RUSAGE_SELF)
    if argv[0] == "ir_measures":
        import ir_measures
        from ir_measures import RR, R, nDCG

        qrels = ir_measures.read_trec_qrels(argv[1])
        run = ir_measures.read_trec_run(argv[2])
        ir_measures.calc_aggregate([nDCG @ 10, RR @ 10, R @ 100], qrels, run)
    else:
        from click.testing import CliRunner

        from trawl.cli import main

        result = CliRunner().invoke(main, argv, catch_exceptions=False)
        if result.exit_code != 0:
            raise SystemExit(f"{argv[0]} failed: {result.output}")
    cpu1 = resource.getrusage(resource.RUSAGE_SELF)
    return {"wall_s": time.perf_counter() - t,
            "cpu_s": (cpu1.ru_utime - cpu0.ru_utime) + (cpu1.ru_stime - cpu0.ru_stime),
            "peak": cpu1.ru_maxrss * 1024}


STEPS = {"build": step_build, "search": step_search, "cli": step_cli}


def child(step: str, **args) -> dict:
    proc = subprocess.run([sys.executable, __file__, "--step", step, json.dumps(args)],
                          capture_output=True, text=True,
                          env=dict(os.environ, HF_HUB_OFFLINE="1", TRANSFORMERS_OFFLINE="1"))
    if proc.returncode != 0:
        sys.exit(f"step {step} failed:\n{proc.stderr[-3000:]}")
    return json.loads(proc.stdout.strip().splitlines()[-1])


# --- the report ------------------------------------------------------------------------------

def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--items", type=int, default=200_000)
    ap.add_argument("--queries", type=int, default=10_000, help="queries searched")
    ap.add_argument("--score-queries", type=int, default=100_000,
                    help="queries scored and compared")
    ap.add_argument("--depth", type=int, default=100, help="results per query in the runs")
    ap.add_argument("--resamples", type=int, default=10_000, help="for compare")
    ap.add_argument("-k", type=int, default=100, help="results per query when searching")
    ap.add_argument("--static", default=None, help="static model folder (else distil once)")
    ap.add_argument("--work", default=None, help="scratch folder (default: a temp folder)")
    ap.add_argument("--step", default=None, help=argparse.SUPPRESS)
    args, rest = ap.parse_known_args()
    if args.step:
        print(json.dumps(STEPS[args.step](json.loads(rest[0]))))
        return

    model = static_model(args.static)
    model_bytes = sum(p.stat().st_size for p in model.rglob("*") if p.is_file())
    work = Path(args.work or tempfile.mkdtemp(prefix="trawl-bench-scale-"))
    work.mkdir(parents=True, exist_ok=True)
    try:
        t = time.perf_counter()
        catalogue = work / "catalogue.jsonl"
        write_catalogue(catalogue, args.items)
        write_queries(work / "queries.tsv", args.queries)
        qrels, runs = write_judged_runs(work, args.score_queries, args.depth, args.items)
        print(f"inputs: {args.items:,} items ({mb(catalogue.stat().st_size)} JSONL), "
              f"{args.queries:,} queries, qrels + 2 runs of {args.score_queries:,} queries x "
              f"{args.depth} ({mb(sum(r.stat().st_size for r in runs))}); generated in "
              f"{time.perf_counter() - t:.0f} s")
        print(f"static model {model} ({mb(model_bytes)})\n")

        b = child("build", catalogue=str(catalogue), model=str(model), index=str(work / "idx"),
                  cache=str(work / "cache"), work=str(work))
        vec_bytes = b["items"] * b["dim"] * 4
        goal = 2 * vec_bytes + model_bytes
        interp = b["rss_start"]
        cat_mem = b["rss_catalogue"] - b["rss_start"]
        model_mem = b["rss_model"] - b["rss_catalogue"]
        build_mem = b["build_peak"] - b["build_rss_before"]  # the build starts at the top so far
        print(f"index build, {b['items']:,} items, {b['dim']} dims (empty cache):")
        print(f"  load catalogue {b['load_s']:.1f} s; build {b['build_s']:.1f} s "
              f"({b['items'] / b['build_s']:,.0f} items/s); bare encode + save {b['bare_s']:.1f} s")
        print(f"  build / bare = {b['build_s'] / b['bare_s']:.2f}x (embedding cache, hashing, "
              "ids, manifest, atomic swap)")
        print(f"  rebuild of the unchanged catalogue: {b['rebuild_s']:.1f} s, "
              f"{b['rebuild_reused']:,} vectors from the cache "
              f"({b['build_s'] / b['rebuild_s']:.1f}x faster)")
        print(f"  index folder {mb(b['index_bytes'])}; vectors {mb(vec_bytes)}")
        print(f"memory (RSS), vectors = {mb(vec_bytes)}, model = {mb(model_bytes)} on disk, "
              f"goal 2 x vectors + model = {mb(goal)}:")
        print(f"  interpreter + libraries     {mb(interp):>9}")
        print(f"  catalogue objects           {mb(cat_mem):>9}  "
              f"({cat_mem / b['items']:,.0f} bytes per item)")
        print(f"  model loaded (+ its imports){mb(model_mem):>9}")
        for name, ph in b["phases"].items():
            print(f"  {name + ' phase peak':<27} {mb(ph['peak'] - ph['rss_before']):>9}  "
                  f"above its start; {mb(ph['rss_after'] - ph['rss_before'])} kept after")
        print(f"  build working set (peak)    {mb(build_mem):>9}  = "
              f"{build_mem / vec_bytes:.2f}x vectors; bare encode needs "
              f"{mb(b['bare_peak_above'])} = {b['bare_peak_above'] / vec_bytes:.2f}x")
        print(f"  process peak up to the end  {mb(b['build_peak']):>9}")
        own = build_mem + model_mem
        print(f"  build working set + model = {mb(own)} = {own / goal:.2f}x goal "
              f"({'meets' if own <= goal else 'MISSES'} goal); whole process incl. "
              f"interpreter and catalogue = {b['build_peak'] / goal:.2f}x goal\n")

        s = child("search", catalogue=str(catalogue), model=str(model), index=str(work / "idx"),
                  queries=str(work / "queries.tsv"), k=args.k)
        print(f"search, {s['queries']:,} queries, top {args.k} of {b['items']:,} (exact, "
              "batches of 64):")
        print(f"  open index {s['open_s']:.1f} s; search {s['search_s']:.1f} s = "
              f"{s['queries'] / s['search_s']:,.0f} queries/s; bare encode + faiss "
              f"{s['bare_s']:.1f} s = {s['queries'] / s['bare_s']:,.0f} queries/s")
        print(f"  trawl / bare = {s['search_s'] / s['bare_s']:.2f}x; search adds "
              f"{mb(s['search_peak_above'])} at peak ({s['results']:,} results held)\n")

        ref = child("cli", argv=["ir_measures", str(qrels), str(runs[0])])
        score = child("cli", argv=["score", str(qrels), str(runs[0]), "-m", "ndcg@10", "-m",
                                   "mrr@10", "-m", "recall@100", "--json"])
        comp = child("cli", argv=["compare", str(qrels), str(runs[0]), str(runs[1]),
                                  "--resamples", str(args.resamples), "--json"])
        n = args.score_queries
        print(f"score and compare, {n:,} queries x {args.depth} results (wall, CPU, peak RSS):")
        for name, r in (("ir_measures (3 metrics)", ref), ("trawl score (3 metrics)", score),
                        (f"trawl compare (2 runs, 4 metrics, {args.resamples:,} resamples)",
                         comp)):
            print(f"  {name:<56} {r['wall_s']:6.1f} s  {r['cpu_s']:6.1f} s CPU  "
                  f"{mb(r['peak']):>9}")
        print(f"  trawl score / ir_measures = {score['cpu_s'] / ref['cpu_s']:.2f}x CPU, "
              f"{score['wall_s'] / ref['wall_s']:.2f}x wall")
        print(f"  trawl compare / trawl score = {comp['cpu_s'] / score['cpu_s']:.2f}x CPU "
              "(reads two runs; adds the bootstrap and sign-flip tests)")
    finally:
        if not args.work:
            shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main()
