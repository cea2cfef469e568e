"""`trawl score` vs ir_measures, whole process from a cold start.

Goal: scoring 5,000 queries x 100 results with 3 metrics plus the per-destination-type
breakdown takes no longer than ir_measures computing the same 3 metrics (reading the
same TREC files). Both run as fresh Python processes, alternating, several times; we
report medians of wall time and of CPU time (user + system; steadier when the machine
is shared) and their ratios, then where trawl's time goes inside the process.

    .venv/bin/python bench/bench_scoring.py [--queries 5000] [--repeats 5]
"""

from __future__ import annotations

import argparse
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _synthetic import write_collection  # noqa: E402

REFERENCE = """
import sys, ir_measures
from ir_measures import nDCG, RR, R
qrels = ir_measures.read_trec_qrels(sys.argv[1])
run = ir_measures.read_trec_run(sys.argv[2])
res = ir_measures.calc_aggregate([nDCG@10, RR@10, R@100], qrels, run)
print(res[nDCG@10], res[R@100])
"""


def timed(cmd: list[str]) -> tuple[float, float, str]:
    """Wall seconds, CPU seconds of the child, and its stdout."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    out = subprocess.run(cmd, check=True, capture_output=True, text=True).stdout
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu, out


def stages(files: dict) -> dict[str, float]:
    """CPU seconds of each step of `trawl score` inside one process."""
    t = time.process_time()
    from trawl.catalogue import load_catalogue
    from trawl.judgments import read_qrels
    from trawl.runs import read_run
    from trawl.report.text import scores as render_scores
    from trawl.scores import score_runs

    out = {"imports": time.process_time() - t}
    t = time.process_time()
    run = read_run(files["runs"][0])
    out["read run"] = time.process_time() - t
    t = time.process_time()
    qrels = read_qrels(files["qrels"])
    out["read qrels"] = time.process_time() - t
    t = time.process_time()
    cat = load_catalogue(files["catalogue"])
    out["load catalogue"] = time.process_time() - t
    t = time.process_time()
    render_scores(score_runs(qrels, [run], ["ndcg@10", "mrr@10", "recall@100"], cat).as_dict())
    out["score + per type + render"] = time.process_time() - t
    return out


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--queries", type=int, default=5000)
    ap.add_argument("--depth", type=int, default=100)
    ap.add_argument("--items", type=int, default=2000, help="catalogue size")
    ap.add_argument("--repeats", type=int, default=5)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        files = write_collection(Path(tmp), args.queries, args.depth, args.items, runs=1, seed=0)
        qrels, run, cat = str(files["qrels"]), str(files["runs"][0]), str(files["catalogue"])
        ref_cmd = [sys.executable, "-c", REFERENCE, qrels, run]
        ours_cmd = [sys.executable, "-m", "trawl.cli", "score", qrels, run, "-c", cat,
                    "-m", "ndcg@10", "-m", "mrr@10", "-m", "recall@100"]
        timed(ref_cmd), timed(ours_cmd)  # warm the file cache for both
        ref, ours = [], []
        for _ in range(args.repeats):
            ref.append(timed(ref_cmd))
            ours.append(timed(ours_cmd))
        breakdown = stages(files)
    rw, rc = statistics.median(w for w, _, _ in ref), statistics.median(c for _, c, _ in ref)
    ow, oc = statistics.median(w for w, _, _ in ours), statistics.median(c for _, c, _ in ours)
    print(f"scoring {args.queries} queries x {args.depth} results, 3 metrics; trawl adds the "
          f"per-type breakdown over a {args.items}-item catalogue; {args.repeats} runs each")
    print(f"ir_measures (reference)  wall {rw:6.2f} s   cpu {rc:6.2f} s   "
          f"-> {ref[0][2].strip()}")
    print(f"trawl score              wall {ow:6.2f} s   cpu {oc:6.2f} s")
    print(f"ratio trawl / ir_measures: wall {ow / rw:.2f}x, cpu {oc / rc:.2f}x "
          f"(goal: <= 1.00x)")
    print("where trawl's CPU time goes (one in-process pass):")
    for name, sec in breakdown.items():
        print(f"  {name:28s} {sec:6.2f} s")


if __name__ == "__main__":
    main()
