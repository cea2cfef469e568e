"""Index build throughput: the local engine against Ray with 1 and 2 local workers.

Each build starts from an empty embedding cache, so every item is embedded. Ray's
figures include starting the local runtime and loading the model once per worker, as a
user pays them; ``after start-up`` divides by the build time minus that start-up
(measured on a one-item build: runtime, workers, model loads). Not a test: it takes
minutes.

    .venv/bin/python bench/bench_engines.py [--items 20000] [--encoders static,minilm]
        [--static DIR]

On a machine with few cores Ray's workers compete with each other and the driver, so
expect no gain here; the figures say what the engine costs, and what scales on a
cluster is the number of worker machines.
"""

from __future__ import annotations

import argparse
import os
import shutil
import tempfile
import time
from pathlib import Path

from bench_scale import static_model, write_catalogue


def build_seconds(catalogue, spec: str, folder: Path, engine) -> float:
    from trawl.index import build_index

    t = time.perf_counter()
    build_index(catalogue, spec, folder / "idx", cache_dir=folder / "cache", quiet=True,
                engine=engine)
    return time.perf_counter() - t


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--items", type=int, default=20_000)
    ap.add_argument("--encoders", default="static,minilm")
    ap.add_argument("--static", default=None, help="static model folder")
    args = ap.parse_args()

    from trawl.catalogue import load_catalogue
    from trawl.engines import LocalEngine
    from trawl.engines.ray import RayEngine

    print(f"load average at start: {' '.join(f'{x:.1f}' for x in os.getloadavg())} "
          f"({os.cpu_count()} CPUs)")
    work = Path(tempfile.mkdtemp(prefix="trawl-bench-engines-"))
    try:
        write_catalogue(work / "cat.jsonl", args.items)
        cat = load_catalogue(work / "cat.jsonl")
        tiny = load_catalogue(write_tiny(work / "tiny.jsonl"))
        specs = {"static": f"static:{static_model(args.static)}", "minilm": "minilm"}
        print(f"{args.items:,} items, empty cache each time")
        print(f"  {'encoder':<8} {'engine':<16} {'build s':>8} {'items/s':>9} "
              f"{'after start-up':>15}")
        for name in args.encoders.split(","):
            spec = specs[name]
            for label, make in (("local", LocalEngine),
                                ("ray, 1 worker", lambda: RayEngine(workers=1)),
                                ("ray, 2 workers", lambda: RayEngine(workers=2))):
                start_up = 0.0
                if label != "local":  # runtime start + model loads, on one item
                    start_up = build_seconds(tiny, spec, work / f"{name}-{label}-tiny", make())
                s = build_seconds(cat, spec, work / f"{name}-{label}", make())
                print(f"  {name:<8} {label:<16} {s:8.1f} {args.items / s:9,.0f} "
                      f"{args.items / max(s - start_up, 1e-9):15,.0f}", flush=True)
        print(f"load average at end: {' '.join(f'{x:.1f}' for x in os.getloadavg())}")
    finally:
        shutil.rmtree(work, ignore_errors=True)


def write_tiny(path: Path) -> Path:
    path.write_text('{"id": "one", "type": "faq", "title": "Lost property", '
                    '"text": "Ask at the depot desk."}\n')
    return path


if __name__ == "__main__":
    main()
