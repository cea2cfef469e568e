"""Scale: score, compare and index build at the sizes of issue 18, with their references.

Goals, as ratios taken in one run on the same files (a shared machine's load moves both
sides together):

- score on 100k queries x 100 results: peak RSS <= 0.3x and wall time <= 0.25x
  ir_measures' (nDCG@10, RR@10, R@100 on the same files);
- compare of 4 such runs with 10,000 resamples: peak RSS <= 0.5x ir_measures' on one
  run and <= 1.5x trawl score's on one run;
- 200k-item static index build: time <= 1.3x a bare encode loop (model2vec ``encode`` of
  the same texts + ``np.save``), judged on the median wall ratio of build/bare pairs;
  whole-process peak RSS <= 2x the vector bytes + the model file.

Every measured step runs in a fresh child process (this script with ``--step``) that
reports its own wall time, CPU time and peak RSS (``ru_maxrss``), so the figures do not
mix. Inputs are generated with numpy and pyarrow in about a minute. On a shared machine
one pair's wall ratio moves with the load, so ``--pairs N`` runs N pairs, alternating
which step goes first, and prints each pair's wall and CPU ratio (CPU = user + system
time of the step's process over the timed part) with the load average, then the medians;
``--only build`` skips score and compare.

    .venv/bin/python bench/bench_scale.py [--items 200000] [--score-queries 100000]
        [--depth 100] [--runs 4] [--resamples 10000] [--static DIR] [--work DIR]
        [--only build] [--pairs 1] [--catalogue FILE]

Without --static the distilled model in the trawl cache folder (``static-distilled``,
as bench/silver_agreement.py uses) is used, distilled once if absent.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

WORDS_PER_ITEM = (20, 80)  # help-centre entries: a title and a paragraph or two
TYPES = ("article", "faq", "screen", "form")
MB = 1 << 20
GOALS = {"score_rss": 0.3, "score_wall": 0.25, "compare_vs_ref": 0.5, "compare_vs_score": 1.5,
         "build_time": 1.3, "build_peak": 1.0}


def mb(n: float) -> str:
    return f"{n / MB:,.0f} MB"


# --- inputs ---------------------------------------------------------------------------------

def vocabulary() -> list[str]:
    from wordfreq import top_n_list

    return [w for w in top_n_list("en", 6000) if w.isalpha()][:5000]


def write_catalogue(path: Path, items: int, seed: int = 0) -> None:
    """Items with Zipf-distributed words (like real text), all words drawn at once."""
    rng = np.random.default_rng(seed)
    words = vocabulary()
    weights = 1 / np.arange(1, len(words) + 1)
    lengths = rng.integers(*WORDS_PER_ITEM, size=items)
    drawn = rng.choice(len(words), size=int(lengths.sum()), p=weights / weights.sum()).tolist()
    ends = np.cumsum(lengths).tolist()
    with path.open("w", encoding="utf-8") as fh:
        start = 0
        for i, end in enumerate(ends):
            w = [words[j] for j in drawn[start:end]]
            start = end
            fh.write(json.dumps({"id": f"it{i:06d}", "type": TYPES[i % len(TYPES)],
                                 "title": " ".join(w[:6]), "text": " ".join(w[6:])}) + "\n")


def write_judged_runs(folder: Path, queries: int, depth: int, items: int, runs: int,
                      seed: int = 2) -> tuple[Path, list[Path]]:
    """qrels (one grade-2 and up to two grade-1 items per query) and ``runs`` runs of
    ``depth`` results with 4-decimal scores (so ties occur); relevant items come from the
    upper half of the ids and the others from the lower half, so no run lists an item
    twice. Written by pyarrow from dictionary columns (seconds, not minutes)."""
    import pyarrow as pa
    from pyarrow import csv

    rng = np.random.default_rng(seed)
    half = items // 2
    ids = pa.array([f"it{i:06d}" for i in range(items)])
    qids = pa.array([f"q{q}" for q in range(queries)])
    n_rel = rng.integers(1, 4, size=queries)
    rel = half + (rng.integers(0, items - half, size=queries)[:, None] + np.arange(3)) \
        % (items - half)
    mask = np.arange(3)[None, :] < n_rel[:, None]
    options = csv.WriteOptions(include_header=False, delimiter=" ", quoting_style="none")

    def column(codes: np.ndarray, values) -> pa.DictionaryArray:
        return pa.DictionaryArray.from_arrays(pa.array(codes.astype(np.int32)), values)

    qrels = folder / "scale.qrels"
    rows = np.repeat(np.arange(queries), n_rel)
    csv.write_csv(pa.table({
        "qid": column(rows, qids), "iter": pa.array(np.zeros(rows.size, dtype=np.int64)),
        "item": column(rel[mask], ids),
        "grade": pa.array(np.broadcast_to([2, 1, 1], (queries, 3))[mask])}), qrels, options)
    paths = []
    for r in range(runs):
        hit_rate = 0.5 + 0.05 * r
        perm = rng.permutation(half)[:depth]
        path = folder / f"run{r}.run"
        tag = pa.array([f"sys{r}"])
        with csv.CSVWriter(path, pa.schema([("qid", pa.dictionary(pa.int32(), pa.string())),
                                            ("q0", pa.dictionary(pa.int32(), pa.string())),
                                            ("item", pa.dictionary(pa.int32(), pa.string())),
                                            ("rank", pa.int64()), ("score", pa.float64()),
                                            ("tag", pa.dictionary(pa.int32(), pa.string()))]),
                           write_options=options) as writer:
            for start in range(0, queries, 10_000):
                q = np.arange(start, min(queries, start + 10_000))
                shown = (perm[None, :] + q[:, None]) % half
                for j in range(3):
                    take = (j < n_rel[q]) & (rng.random(q.size) < hit_rate)
                    at = rng.integers(0, depth, size=q.size)
                    shown[take, at[take]] = rel[q[take], j]
                scores = np.round(np.sort(rng.random((q.size, depth)), axis=1)[:, ::-1], 4)
                n = q.size * depth
                writer.write_table(pa.table({
                    "qid": column(np.repeat(q, depth), qids),
                    "q0": column(np.zeros(n), pa.array(["Q0"])),
                    "item": column(shown.ravel(), ids),
                    "rank": pa.array(np.tile(np.arange(1, depth + 1), q.size)),
                    "score": pa.array(scores.ravel()),
                    "tag": column(np.zeros(n), tag)}))
        paths.append(path)
    return qrels, paths


def static_model(given: str | None) -> Path:
    if given:
        return Path(given)
    from trawl.distill import distill_static
    from trawl.embedcache import default_cache_dir

    folder = default_cache_dir() / "static-distilled"
    if not (folder / "config.json").is_file():
        print(f"distilling a static model into {folder} (once) ...", flush=True)
        distill_static(folder, quiet=True)
    return folder


# --- child steps (each in its own process) ---------------------------------------------------

def step_build(a: dict) -> dict:
    from trawl.catalogue import load_catalogue
    from trawl.index import build_index

    cat = load_catalogue(a["catalogue"])
    t, c = time.perf_counter(), time.process_time()
    info = build_index(cat, f"static:{a['model']}", a["index"], cache_dir=a["cache"],
                       quiet=True)
    return {"s": time.perf_counter() - t, "s_cpu": time.process_time() - c,
            "items": info.items, "dim": info.dim}


def step_bare(a: dict) -> dict:
    """The least any indexer does: load the model, encode every text, save the matrix."""
    from model2vec import StaticModel

    from trawl.catalogue import load_catalogue

    cat = load_catalogue(a["catalogue"])
    t, c = time.perf_counter(), time.process_time()
    model = StaticModel.from_pretrained(a["model"])
    vectors = model.encode(cat.texts(), batch_size=1024, show_progress_bar=False,
                           use_multiprocessing=False)
    np.save(Path(a["work"]) / "bare.npy", vectors.astype(np.float32))
    return {"s": time.perf_counter() - t, "s_cpu": time.process_time() - c}


def step_ir_measures(a: dict) -> dict:
    import ir_measures
    from ir_measures import RR, R, nDCG

    qrels = ir_measures.read_trec_qrels(a["qrels"])
    run = ir_measures.read_trec_run(a["run"])
    got = ir_measures.calc_aggregate([nDCG @ 10, RR @ 10, R @ 100], qrels, run)
    return {"values": {str(k): v for k, v in got.items()}}


def step_trawl(a: dict) -> dict:
    """One trawl CLI command, in this process."""
    from click.testing import CliRunner

    from trawl.cli import main

    result = CliRunner().invoke(main, a["argv"], catch_exceptions=False)
    if result.exit_code != 0:
        raise SystemExit(f"trawl {a['argv'][0]} failed: {result.output}")
    return {"output": result.output[-2000:]}


STEPS = {"build": step_build, "bare": step_bare, "ir_measures": step_ir_measures,
         "trawl": step_trawl}


def run_step(step: str, args: dict) -> dict:
    t = time.perf_counter()
    out = STEPS[step](args)
    usage = resource.getrusage(resource.RUSAGE_SELF)
    out.update(wall=time.perf_counter() - t, cpu=usage.ru_utime + usage.ru_stime,
               peak=usage.ru_maxrss * 1024)
    return out


def child(step: str, **args) -> dict:
    """Run one step in a fresh interpreter; its peak RSS is that process's alone."""
    t = time.perf_counter()
    proc = subprocess.run([sys.executable, __file__, "--step", step, json.dumps(args)],
                          capture_output=True, text=True,
                          env=dict(os.environ, HF_HUB_OFFLINE="1", TRANSFORMERS_OFFLINE="1"))
    if proc.returncode != 0:
        sys.exit(f"step {step} failed:\n{proc.stderr[-3000:]}")
    out = json.loads(proc.stdout.strip().splitlines()[-1])
    out["process_wall"] = time.perf_counter() - t  # interpreter start and imports included
    return out


# --- the report ------------------------------------------------------------------------------

def verdict(ratio: float, goal: float) -> str:
    return f"{ratio:.2f}x (goal <= {goal}x: {'met' if ratio <= goal else 'MISSED'})"


def report_score(ref: dict, score: dict, comp: dict, runs: int, resamples: int) -> None:
    print(f"{'':<46} {'wall':>8} {'CPU':>8} {'peak RSS':>10}")
    for name, r in (("ir_measures, one run (3 metrics)", ref),
                    ("trawl score, one run (3 metrics)", score),
                    (f"trawl compare, {runs} runs, {resamples:,} resamples", comp)):
        print(f"  {name:<44} {r['process_wall']:7.1f}s {r['cpu']:7.1f}s {mb(r['peak']):>10}")
    print(f"  score / ir_measures: peak RSS {verdict(score['peak'] / ref['peak'], GOALS['score_rss'])}"
          f"; wall {verdict(score['process_wall'] / ref['process_wall'], GOALS['score_wall'])}"
          f"; CPU {score['cpu'] / ref['cpu']:.2f}x")
    print(f"  compare / ir_measures (one run): peak RSS "
          f"{verdict(comp['peak'] / ref['peak'], GOALS['compare_vs_ref'])}")
    print(f"  compare / score (one run): peak RSS "
          f"{verdict(comp['peak'] / score['peak'], GOALS['compare_vs_score'])}")
    print(f"  ir_measures values: {ref['values']}")
    print("  trawl score output (tail):")
    print("    " + "\n    ".join(score["output"].strip().splitlines()[-6:]))


def build_pairs(catalogue: Path, model: Path, work: Path, pairs: int) -> list[dict]:
    """``pairs`` build/bare pairs, each step a fresh process with an empty cache, the
    order alternating (build-bare, bare-build, ...) so a load that drifts during the
    session weighs on both sides alike."""
    out = []
    for i in range(pairs):
        order = ("build", "bare") if i % 2 == 0 else ("bare", "build")
        load = os.getloadavg()[0]
        got = {}
        for step in order:
            shutil.rmtree(work / "idx", ignore_errors=True)
            shutil.rmtree(work / "cache", ignore_errors=True)  # every build starts empty
            (work / "bare.npy").unlink(missing_ok=True)
            got[step] = child(step, catalogue=str(catalogue), model=str(model),
                              index=str(work / "idx"), cache=str(work / "cache"),
                              work=str(work))
        b, bare = got["build"], got["bare"]
        pair = {"build": b, "bare": bare, "wall": b["s"] / bare["s"],
                "cpu": b["s_cpu"] / bare["s_cpu"], "load": (load, os.getloadavg()[0])}
        print(f"  pair {i + 1} ({'-'.join(order)}): build {b['s']:.1f} s (CPU {b['s_cpu']:.1f} s), "
              f"bare {bare['s']:.1f} s (CPU {bare['s_cpu']:.1f} s): wall {pair['wall']:.2f}x, "
              f"CPU {pair['cpu']:.2f}x; load {pair['load'][0]:.1f} -> {pair['load'][1]:.1f}",
              flush=True)
        out.append(pair)
    return out


def report_build(pairs: list[dict], model_bytes: int) -> None:
    """The goals: the median wall ratio of the pairs (CPU ratio and load beside it, since
    a shared machine moves wall times), and the highest whole-process peak of the builds."""
    b = pairs[0]["build"]
    vec_bytes = b["items"] * b["dim"] * 4
    goal = 2 * vec_bytes + model_bytes
    wall = float(np.median([p["wall"] for p in pairs]))
    cpu = float(np.median([p["cpu"] for p in pairs]))
    loads = [x for p in pairs for x in p["load"]]
    build_s = float(np.median([p["build"]["s"] for p in pairs]))
    bare_s = float(np.median([p["bare"]["s"] for p in pairs]))
    print(f"  median of {len(pairs)} pair(s): build {build_s:.1f} s ({b['items'] / build_s:,.0f} "
          f"items/s), bare load + encode + save {bare_s:.1f} s")
    print(f"  build / bare wall (median of pairs): {verdict(wall, GOALS['build_time'])}; "
          f"CPU {cpu:.2f}x; load average {min(loads):.1f} to {max(loads):.1f}")
    peak = max(p["build"]["peak"] for p in pairs)
    bare_peak = max(p["bare"]["peak"] for p in pairs)
    print(f"  whole-process peak RSS: build {mb(peak)}, bare {mb(bare_peak)}; goal "
          f"2 x vectors ({mb(vec_bytes)}) + model ({mb(model_bytes)}) = {mb(goal)}")
    print(f"  build peak / goal: {verdict(peak / goal, GOALS['build_peak'])}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--items", type=int, default=200_000)
    ap.add_argument("--score-queries", type=int, default=100_000)
    ap.add_argument("--depth", type=int, default=100, help="results per query in the runs")
    ap.add_argument("--runs", type=int, default=4, help="runs compared")
    ap.add_argument("--resamples", type=int, default=10_000, help="for compare")
    ap.add_argument("--static", default=None, help="static model folder")
    ap.add_argument("--work", default=None, help="scratch folder (default: a temp folder)")
    ap.add_argument("--only", choices=("all", "build"), default="all",
                    help="'build': the index build against the bare loop only")
    ap.add_argument("--pairs", type=int, default=1,
                    help="build/bare pairs, alternating their order (the goal is the median)")
    ap.add_argument("--catalogue", default=None,
                    help="an existing --items catalogue to reuse (default: generated)")
    ap.add_argument("--step", default=None, help=argparse.SUPPRESS)
    args, rest = ap.parse_known_args()
    if args.step:
        print(json.dumps(run_step(args.step, json.loads(rest[0]))))
        return

    started = time.perf_counter()
    print(f"load average at start: {' '.join(f'{x:.1f}' for x in os.getloadavg())} "
          f"({os.cpu_count()} CPUs)")
    model = static_model(args.static)
    model_bytes = sum(p.stat().st_size for p in model.rglob("*") if p.is_file())
    work = Path(args.work or tempfile.mkdtemp(prefix="trawl-bench-scale-"))
    work.mkdir(parents=True, exist_ok=True)
    try:
        t = time.perf_counter()
        catalogue = Path(args.catalogue) if args.catalogue else work / "catalogue.jsonl"
        if not args.catalogue:
            write_catalogue(catalogue, args.items)
        print(f"inputs: {args.items:,} items ({mb(catalogue.stat().st_size)})", end="")
        if args.only == "all":
            qrels, runs = write_judged_runs(work, args.score_queries, args.depth, args.items,
                                            args.runs)
            print(f", qrels and {args.runs} runs of {args.score_queries:,} queries x "
                  f"{args.depth} ({mb(runs[0].stat().st_size)} each)", end="")
        print(f"; generated in {time.perf_counter() - t:.0f} s\n")

        if args.only == "all":
            print(f"score and compare, {args.score_queries:,} queries x {args.depth} results:")
            ref = child("ir_measures", qrels=str(qrels), run=str(runs[0]))
            score = child("trawl", argv=["score", str(qrels), str(runs[0]), "-m", "ndcg@10",
                                         "-m", "mrr@10", "-m", "recall@100"])
            comp = child("trawl", argv=["compare", str(qrels), *map(str, runs),
                                        "--resamples", str(args.resamples)])
            report_score(ref, score, comp, args.runs, args.resamples)
            print()

        print(f"index build, {args.items:,} items, static model {model} "
              f"({mb(model_bytes)}), empty cache, {args.pairs} build/bare pair(s):")
        report_build(build_pairs(catalogue, model, work, args.pairs), model_bytes)
        print(f"\nload average at end: {' '.join(f'{x:.1f}' for x in os.getloadavg())}; "
              f"whole benchmark {time.perf_counter() - started:.0f} s")
    finally:
        if not args.work:
            shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main()
