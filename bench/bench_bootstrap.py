"""Paired bootstrap intervals: trawl.stats vs scipy.stats.bootstrap, same process.

Goal: 10,000 resamples of 5,000 queries for 4 runs (3 comparisons with the baseline)
in under 1 s, and at least 10x faster than scipy.stats.bootstrap (paired, percentile,
vectorised) computing the same intervals. Prints wall and CPU seconds, the ratios, and
how far apart the two libraries' interval bounds are (Monte Carlo noise only).

    .venv/bin/python bench/bench_bootstrap.py [--queries 5000] [--resamples 10000]
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from scipy import stats as scipy_stats

from trawl.stats import bootstrap_many, paired_bootstrap, randomisation_many


def clock(fn):
    """(wall s, cpu s, result) of one call; CPU counts every thread of the process."""
    w, c = time.perf_counter(), time.process_time()
    out = fn()
    return time.perf_counter() - w, time.process_time() - c, out


def mean_diff(x, y, axis=-1):
    return np.mean(x - y, axis=axis)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--queries", type=int, default=5000)
    ap.add_argument("--runs", type=int, default=4)
    ap.add_argument("--resamples", type=int, default=10000)
    ap.add_argument("--repeats", type=int, default=3)
    args = ap.parse_args()
    rng = np.random.default_rng(0)
    base = rng.random(args.queries)
    others = [np.clip(base + rng.normal(0.01 * i, 0.2, args.queries), 0, 1)
              for i in range(1, args.runs)]
    diffs = np.stack([o - base for o in others], axis=1)
    B = args.resamples

    batch = [clock(lambda: bootstrap_many(diffs, B, seed=0)) for _ in range(args.repeats)]
    single = [clock(lambda: [paired_bootstrap(o, base, B, seed=0) for o in others])
              for _ in range(args.repeats)]
    rand = [clock(lambda: randomisation_many(diffs, B, seed=0)) for _ in range(args.repeats)]
    ref = clock(lambda: [scipy_stats.bootstrap((o, base), mean_diff, paired=True,
                                               vectorized=True, n_resamples=B,
                                               method="percentile",
                                               rng=np.random.default_rng(1)).confidence_interval
                         for o in others])
    ours = batch[0][2]
    width = max(e.high - e.low for e in ours)
    gap = max(max(abs(e.low - ci.low), abs(e.high - ci.high)) for e, ci in zip(ours, ref[2]))

    def best(rows):
        return min(r[0] for r in rows), min(r[1] for r in rows)

    bw, bc = best(batch)
    sw, sc = best(single)
    rw, rc = best(rand)
    print(f"{args.runs} runs ({args.runs - 1} comparisons), {args.queries} queries, "
          f"{B} resamples; best of {args.repeats} (scipy: 1 pass)")
    print(f"scipy.stats.bootstrap (reference)    wall {ref[0]:7.3f} s   cpu {ref[1]:7.3f} s")
    print(f"trawl bootstrap_many (one call)      wall {bw:7.3f} s   cpu {bc:7.3f} s   "
          f"-> {ref[0] / bw:5.1f}x faster (wall), {ref[1] / bc:5.1f}x (cpu)")
    print(f"trawl paired_bootstrap (per pair)    wall {sw:7.3f} s   cpu {sc:7.3f} s   "
          f"-> {ref[0] / sw:5.1f}x faster (wall), {ref[1] / sc:5.1f}x (cpu)")
    print(f"trawl randomisation test (all pairs) wall {rw:7.3f} s   cpu {rc:7.3f} s")
    print(f"goal: under 1 s and >= 10x faster; largest gap between bounds {gap:.5f} "
          f"(interval width {width:.5f}; Monte Carlo noise)")


if __name__ == "__main__":
    main()
