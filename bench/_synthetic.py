"""Seeded synthetic qrels, runs and catalogue for the benchmarks (no real data needed)."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

TYPES = ("article", "faq", "screen", "form")


def write_collection(folder: Path, queries: int = 5000, depth: int = 100, items: int = 10000,
                     runs: int = 1, seed: int = 0) -> dict[str, Path | list[Path]]:
    """Write catalogue.jsonl, qrels.txt and run-N.txt files; return their paths.

    Each query has one grade-2 item, up to three grade-1 items and a grade-0 item;
    runs rank 100 items with scores rounded to 3 decimals, so ties occur.
    """
    rng = np.random.default_rng(seed)
    folder.mkdir(parents=True, exist_ok=True)
    ids = [f"{TYPES[i % len(TYPES)]}-{i:05d}" for i in range(items)]
    cat = folder / "catalogue.jsonl"
    with cat.open("w") as fh:
        for i, item in enumerate(ids):
            fh.write(json.dumps({"id": item, "type": TYPES[i % len(TYPES)],
                                 "title": f"Item {i}"}) + "\n")
    judged: list[np.ndarray] = []
    qrels = folder / "qrels.txt"
    with qrels.open("w") as fh:
        for q in range(queries):
            picks = rng.choice(items, size=5, replace=False)
            n_partial = int(rng.integers(0, 4))
            grades = [2] + [1] * n_partial + [0]
            judged.append(picks[: len(grades)])
            for item, g in zip(picks, grades):
                fh.write(f"q{q} 0 {ids[item]} {g}\n")
    run_paths = []
    for r in range(runs):
        path = folder / f"run-{r}.txt"
        lines = []
        for q in range(queries):
            others = rng.choice(items, size=depth, replace=False)
            keep = [i for i in judged[q] if rng.random() < 0.7]
            ranked = list(dict.fromkeys(keep + list(others)))[:depth]
            scores = np.round(np.sort(rng.random(len(ranked)))[::-1], 3)
            order = rng.permutation(len(ranked))  # judged items land at random ranks
            for rank, (j, s) in enumerate(zip(order, scores), start=1):
                lines.append(f"q{q} Q0 {ids[ranked[j]]} {rank} {s:.3f} sys{r}\n")
        path.write_text("".join(lines))
        run_paths.append(path)
    return {"catalogue": cat, "qrels": qrels, "runs": run_paths}
