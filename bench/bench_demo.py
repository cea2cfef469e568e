"""`trawl demo` from an empty folder, then again: the rerun must reuse the distilled model,
the indexes and the embedding cache.

Goals (issue 6): a fresh demo finishes in under 10 minutes on 2 cores, a rerun in under
1 minute. Both run as child processes, as a user would start them, so model loading and
imports count. CPU seconds (user + system of the child) are printed beside wall seconds:
on a shared machine wall time mostly measures the neighbours, CPU time measures us.

    .venv/bin/python bench/bench_demo.py [--keep DIR] [extra trawl demo options]
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

FRESH_GOAL_S = 600
RERUN_GOAL_S = 60


def run_demo(out: Path, extra: list[str]) -> tuple[float, float]:
    """Wall and CPU seconds of one `trawl demo` child process."""
    trawl = Path(sys.executable).with_name("trawl")
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    subprocess.run([str(trawl), "demo", "-o", str(out), "-q", *extra], check=True,
                   stdout=subprocess.DEVNULL)
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--keep", type=Path, default=None,
                    help="Run in this folder and keep it (default: a temporary folder)")
    args, extra = ap.parse_known_args()
    work = args.keep or Path(tempfile.mkdtemp(prefix="trawl-bench-demo-"))
    out = work / "demo-out"
    shutil.rmtree(out, ignore_errors=True)
    try:
        fresh = run_demo(out, extra)
        rerun = run_demo(out, extra)
    finally:
        if args.keep is None:
            shutil.rmtree(work, ignore_errors=True)
    print(f"trawl demo {' '.join(extra)}".rstrip() + f", {os.cpu_count()} CPUs, "
          f"load average {os.getloadavg()[0]:.1f}")
    for label, (wall, cpu), goal in (("fresh", fresh, FRESH_GOAL_S),
                                     ("rerun", rerun, RERUN_GOAL_S)):
        ok = "meets" if wall < goal else "MISSES"
        print(f"  {label}: {wall:.1f} s wall, {cpu:.1f} s CPU ({ok} goal < {goal} s wall)")
    print(f"  rerun / fresh = {rerun[0] / fresh[0]:.3f}x wall, {rerun[1] / fresh[1]:.3f}x CPU")


if __name__ == "__main__":
    main()
