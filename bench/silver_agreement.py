"""Does silver rank systems the way people do?

Runs five systems (minilm, minilm-int8, a static encoder distilled from the bundled
model, bm25, and Reciprocal Rank Fusion of minilm + bm25) on a catalogue, scores them by
nDCG@10 under its human judgments and under synthesised silver judgments, and prints the
table and the two agreement figures: Kendall's tau between the two system rankings and
Pearson's r between the two nDCG@10 columns. Repeats over several seeds and prints the
spread, since one seed can flatter.

    python bench/silver_agreement.py                       # Cranfield + the demo gold set
    python bench/silver_agreement.py --collection CAT.jsonl QUERIES.tsv QRELS
    python bench/silver_agreement.py --calibrate           # profile from the human queries' text
    python bench/silver_agreement.py --check-with minilm --check-with bm25   # round-trip filter

Slow (minutes: every item is embedded by three encoders once; later runs reuse the
embedding cache in --cache). Silver figures are estimates by construction; this script is
how we measure how far to trust them.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np
from scipy.stats import kendalltau, pearsonr

from trawl.catalogue import load_catalogue
from trawl.index import retrieve
from trawl.judgments import read_qrels
from trawl.metrics import per_query
from trawl.queries import read_queries
from trawl.distill import distill_static
from trawl.fusion import reciprocal_rank_fusion
from trawl.synth import synthesise

ROOT = Path(__file__).resolve().parents[1]
CRANFIELD = ROOT.parent / "shared" / "data" / "cranfield"
COLLECTIONS = {
    "cranfield": (CRANFIELD / "catalogue.jsonl", CRANFIELD / "queries.tsv",
                  CRANFIELD / "qrels.txt"),
    "quillfern": (ROOT / "corpora" / "quillfern.jsonl",
                  ROOT / "qrels" / "quillfern-gold.queries.tsv",
                  ROOT / "qrels" / "quillfern-gold.qrels"),
}
SYSTEMS = ("minilm", "minilm-int8", "static", "bm25", "rrf(minilm+bm25)")
GOAL_TAU, GOAL_R = 0.8, 0.9


def system_scores(cat, queries, qrels, static_dir: Path, cache: Path) -> dict[str, float]:
    """Mean nDCG@10 of the five systems over the judged queries."""
    specs = {"minilm": "minilm", "minilm-int8": "minilm-int8",
             "static": f"static:{static_dir}", "bm25": "bm25"}
    runs = {name: retrieve(cat, spec, queries, k=100, cache_dir=cache, quiet=True)
            for name, spec in specs.items()}
    runs["rrf(minilm+bm25)"] = reciprocal_rank_fusion([runs["minilm"], runs["bm25"]])
    judged = {q: g for q, g in qrels.items() if q in queries}
    return {name: float(per_query(judged, runs[name], ["ndcg@10"])["ndcg@10"].mean())
            for name in SYSTEMS}


def ranks(values: list[float]) -> list[int]:
    order = sorted(range(len(values)), key=lambda k: -values[k])
    out = [0] * len(values)
    for r, k in enumerate(order, start=1):
        out[k] = r
    return out


def study(name: str, paths, seeds, args, static_dir: Path, cache: Path) -> list[tuple]:
    cat_path, q_path, r_path = paths
    if not cat_path.exists():
        print(f"{name}: {cat_path} not found, skipped")
        return []
    cat = load_catalogue(cat_path)
    human_q, human_r = read_queries(q_path), read_qrels(r_path)
    human = system_scores(cat, human_q, human_r, static_dir, cache)
    h = [human[s] for s in SYSTEMS]
    out = []
    for seed in seeds:
        silver_set = synthesise(cat, per_item=args.per_item, sample=args.sample,
                                styles=args.styles, seed=seed, quiet=True,
                                calibrate_with=human_q if args.calibrate else None,
                                calibration_source=str(q_path), cache_dir=cache,
                                check_with=tuple(args.check_with))
        silver = system_scores(cat, dict(silver_set.queries), silver_set.qrels, static_dir,
                               cache)
        s = [silver[x] for x in SYSTEMS]
        tau, r = kendalltau(h, s).statistic, pearsonr(h, s).statistic
        out.append((tau, r))
        print(f"\n{name}, seed {seed}: {len(silver_set.queries)} silver queries "
              f"(mean overlap {silver_set.summary['mean_overlap']}, profile "
              f"{silver_set.summary['profile']['source']}) vs {len(human_r)} human queries")
        print(f"  {'system':18s} {'human nDCG@10':>13s} {'silver nDCG@10':>14s} "
              f"{'human rank':>10s} {'silver rank':>11s}")
        for sys_name, hv, sv, hr, sr in zip(SYSTEMS, h, s, ranks(h), ranks(s)):
            print(f"  {sys_name:18s} {hv:13.3f} {sv:14.3f} {hr:10d} {sr:11d}")
        print(f"  Kendall tau {tau:+.2f} (goal >= {GOAL_TAU}), Pearson r {r:+.2f} "
              f"(goal >= {GOAL_R})")
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--collection", nargs=3, metavar=("CATALOGUE", "QUERIES", "QRELS"),
                    help="Study this collection instead of Cranfield and the demo gold set.")
    ap.add_argument("--seeds", type=int, nargs="+", default=[0, 1, 2])
    ap.add_argument("--per-item", type=int, default=1)
    ap.add_argument("--sample", type=int, default=None, help="Items per silver set (default all).")
    ap.add_argument("--styles", default=None, help="Style mix (default: synth's default).")
    ap.add_argument("--calibrate", action="store_true",
                    help="Calibrate the overlap profile on the human queries' text (not "
                         "their judgments), as a user with a search-log sample would.")
    ap.add_argument("--check-with", action="append", default=[], metavar="SPEC",
                    help="Round-trip check encoder (repeat to fuse), as `trawl synth`.")
    ap.add_argument("--cache", type=Path, default=Path("/tmp/trawl-silver-bench"),
                    help="Embedding cache, indexes and the distilled static model.")
    args = ap.parse_args(argv)
    static_dir = args.cache / "static256"
    if not (static_dir / "config.json").exists():
        print(f"distilling the static encoder into {static_dir} (once) ...", flush=True)
        distill_static(static_dir, quiet=True)
    todo = ({"custom": tuple(Path(p) for p in args.collection)} if args.collection
            else COLLECTIONS)
    summary = {}
    for name, paths in todo.items():
        figures = study(name, paths, args.seeds, args, static_dir, args.cache)
        if figures:
            summary[name] = np.array(figures)
    print("\nsummary over seeds " + " ".join(map(str, args.seeds))
          + " (silver figures are estimates)")
    for name, f in summary.items():
        print(f"  {name:10s} Kendall tau mean {f[:, 0].mean():+.2f} "
              f"[{f[:, 0].min():+.2f}, {f[:, 0].max():+.2f}]   Pearson r mean "
              f"{f[:, 1].mean():+.2f} [{f[:, 1].min():+.2f}, {f[:, 1].max():+.2f}]   "
              f"goals: tau >= {GOAL_TAU}, r >= {GOAL_R}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
