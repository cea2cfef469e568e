"""Index build cost against a bare sentence-transformers encode loop, and re-index speed.

Goals (issue 3): a ``minilm`` build costs <= 1.10x encoding the same texts with
sentence-transformers at the same batch size (trawl's own overhead <= 10%); re-indexing
an unchanged catalogue is >= 20x faster than the first build.

Both sides use the same loaded model; each runs three times, alternating which goes
first, and the fastest run of each counts (on a shared machine single runs are noisy). The re-index uses a
fresh loader, so it pays for hashing the model weights but not for loading them.

    .venv/bin/python bench/bench_index.py [--items 300] [--rounds 3]
"""

from __future__ import annotations

import argparse
import shutil
import tempfile
from pathlib import Path

from _cranfield import cranfield, timed, verdict

from trawl.bundled import model_path
from trawl.index import DEFAULT_BATCH_SIZE, build_index
from trawl.retrievers.loading import EncoderLoader


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--items", type=int, default=300, help="Cranfield abstracts to index")
    ap.add_argument("--rounds", type=int, default=3)
    args = ap.parse_args()
    cat, _, _ = cranfield(args.items)
    texts = cat.texts()
    loader = EncoderLoader()
    model = loader.sentence_transformer(str(model_path()))
    model.encode(texts[:64], batch_size=DEFAULT_BATCH_SIZE)  # warm-up: first calls are slower

    work = Path(tempfile.mkdtemp(prefix="trawl-bench-index-"))
    try:
        bare, ours = [], []
        for r in range(args.rounds):
            sides = [lambda: bare.append(timed(
                         model.encode, texts, batch_size=DEFAULT_BATCH_SIZE,
                         normalize_embeddings=True, convert_to_numpy=True)[0]),
                     lambda: ours.append(timed(
                         build_index, cat, "minilm", work / f"idx{r}",
                         cache_dir=work / f"cache{r}", quiet=True, loader=loader)[0])]
            for side in sides if r % 2 == 0 else sides[::-1]:  # alternate who goes first
                side()
        reindex, info = timed(build_index, cat, "minilm", work / "idx0", cache_dir=work / "cache0",
                              quiet=True, loader=EncoderLoader())
        assert info.embedded == 0
    finally:
        shutil.rmtree(work, ignore_errors=True)

    first = min(ours)
    print(f"index build, {len(texts)} Cranfield abstracts, minilm, batch {DEFAULT_BATCH_SIZE}")
    print(f"  bare sentence-transformers encode: {', '.join(f'{t:.2f}' for t in bare)} s")
    print(f"  trawl build_index (empty cache):   {', '.join(f'{t:.2f}' for t in ours)} s")
    ratio = first / min(bare)
    print(f"  build / bare encode = {ratio:.3f}x  ({verdict(ratio, 1.10, False)})")
    speedup = first / reindex
    print(f"  re-index unchanged catalogue: {reindex:.3f} s; first build / re-index = "
          f"{speedup:.1f}x  ({verdict(speedup, 20, True)})")


if __name__ == "__main__":
    main()
