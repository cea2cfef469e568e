"""The demo: the whole job on the bundled transit catalogue, from an empty folder."""

from __future__ import annotations

import os
import time
from collections.abc import Sequence
from dataclasses import replace
from pathlib import Path

from ..catalogue import check_catalogue, load_catalogue
from ..decision import Limits
from ..embedcache import CACHE_ENV
from ..errors import TrawlError
from ..latency import check_threads
from .evaluation import DEFAULT_RESAMPLES, EvalResult, evaluate
from .searching import Notify
from .sets import JudgmentSet
from .systems import plan_systems

DEMO_CATALOGUE = Path("corpora/quillfern.jsonl")
DEMO_GOLD_QUERIES = Path("qrels/quillfern-gold.queries.tsv")
DEMO_GOLD_QRELS = Path("qrels/quillfern-gold.qrels")
# minilm in the forms teams deploy: torch fp32, the model quantised (torch, onnxruntime),
# onnxruntime fp32, and minilm's own vectors kept as int8 or sign bits (the index, not the
# model, quantised); then the distilled static model, and bm25 as written and stemmed (as
# search engines' English analysers stem; silver overrates it, and the demo shows that)
DEMO_ENCODERS = ("minilm", "minilm-int8", "minilm-onnx", "minilm-onnx-int8",
                 "minilm;store=int8", "minilm;store=binary", "static", "bm25",
                 "bm25;stem=english")
DEMO_FUSE = ("minilm+bm25", "minilm+bm25;stem=english")
STATIC_ALIAS = "static"  # in the demo, the static model it distils itself


def demo_data_root() -> Path:
    """The source checkout holding the demo data (trawl installed in editable mode)."""
    root = Path(__file__).resolve().parents[3]
    missing = [p for p in (DEMO_CATALOGUE, DEMO_GOLD_QUERIES, DEMO_GOLD_QRELS)
               if not (root / p).is_file()]
    if missing:
        raise TrawlError(f"demo data not found: {root / missing[0]} is missing; the demo "
                         "runs from a source checkout installed with `pip install -e .` "
                         "(or `make demo`)")
    return root


def demo(out_dir: str | Path = "demo-out", *, encoders: Sequence[str] = DEMO_ENCODERS,
         fuse: Sequence[str] | None = None, sample: int | None = None,
         resamples: int = DEFAULT_RESAMPLES, seed: int = 0,
         cache_dir: str | Path | None = None, retime: bool = False,
         threads: int | None = None, quiet: bool = False,
         notify: Notify | None = None, limits: Limits | None = None) -> EvalResult:
    """The whole job on the bundled transit catalogue, from an empty folder.

    Checks the catalogue, distils the static encoder (kept for reruns), synthesises
    silver queries, evaluates every system against the silver and the hand-judged gold
    set, and measures how alike the two sets rank the systems. ``static`` among the
    encoders means the distilled model; ``sample`` limits the items queries are
    synthesised from (for quick runs). The embedding cache defaults to
    ``$TRAWL_CACHE_DIR``, else ``OUT/cache`` (so the demo leaves nothing outside OUT).
    ``threads`` and ``limits`` are passed to ``evaluate``.
    """
    from ..distill import distill_static
    from ..silver import write_silver
    from ..synth import SynthSettings, synthesise

    started = time.perf_counter()  # the time printed covers distilling and synthesis too
    say = notify or (lambda _msg: None)
    root = demo_data_root()
    out = Path(out_dir)
    if fuse is None:
        fuse = tuple(f for f in DEMO_FUSE if set(f.split("+")) <= set(encoders))
    static_dir = out / "models" / "static"
    specs = [f"{STATIC_ALIAS}=static:{static_dir}" if e == STATIC_ALIAS else e
             for e in encoders]
    plan_systems(specs, fuse, check_paths=False)  # reject bad options before any work
    check_threads(threads)
    cat = load_catalogue(root / DEMO_CATALOGUE)
    check = check_catalogue(cat, unit="words")
    say(f"check {DEMO_CATALOGUE}: {check.items} items, "
        + ", ".join(f"{n} {t}" for t, n in check.types.items())
        + f"; {len(check.warnings)} warning(s)")
    if STATIC_ALIAS in encoders:
        if (static_dir / "config.json").is_file():
            say(f"distil static encoder: reusing {static_dir}")
        else:
            say(f"distil static encoder from the bundled model into {static_dir}")
            distill_static(static_dir, quiet=quiet)
    cache = cache_dir if cache_dir is not None else (
        os.environ.get(CACHE_ENV) or out / "cache")
    silver = synthesise(cat, SynthSettings(sample=sample, seed=seed), cache_dir=cache,
                        quiet=quiet)
    prefix = out / "silver" / "quillfern-silver"
    write_silver(prefix, silver)
    say(f"synthesise silver queries: {len(silver.queries)} queries from "
        f"{silver.summary['items']} items")
    sets = [JudgmentSet("silver", Path(f"{prefix}.queries.tsv"), Path(f"{prefix}.qrels"),
                        "silver set", silver=True),
            JudgmentSet("gold", root / DEMO_GOLD_QUERIES, root / DEMO_GOLD_QRELS,
                        "gold set", silver=False,
                        how="written and judged by hand for the demo catalogue")]
    result = evaluate(cat, sets, specs, out, fuse=fuse, resamples=resamples, seed=seed,
                      cache_dir=cache,
                      agreement=("silver", "gold") if len(specs) + len(fuse) >= 2 else None,
                      title="Quillfern Regional Transit: rider app search", retime=retime,
                      threads=threads, quiet=quiet, notify=notify, limits=limits)
    return replace(result, seconds=time.perf_counter() - started)
