"""What an evaluation into the same folder can keep from the last one: indexes whose
catalogue, template and encoder still match, and timed runs whose inputs are unchanged.

A timed run is keyed by everything it depends on (the index but not when it was built,
the queries in order, the depth, the compute threads, the timing procedure), so a kept
run is one that measuring again would only repeat.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path
from typing import Any

from .. import __version__
from ..catalogue import Catalogue
from ..errors import EncoderMismatchError, InputError, StaleIndexError, TrawlError
from ..fusion import RRF_K
from ..latency import DEFAULT_WARMUP
from ..engines import Engine
from ..retrievers.loading import EncoderLoader
from ..retrievers.spec import EncoderSpec
from ..runs import Run, read_run
from ..stores import StoreSettings
from .publish import stamp_matches

RUN_STAMP = "run_file"  # latency sidecar key: size and SHA-256 of the run file


def open_or_build(catalogue: Catalogue, spec: EncoderSpec, folder: Path, ann: str,
                  cache_dir: Path | None, quiet: bool, loader: EncoderLoader,
                  store: StoreSettings | None = None,
                  engine: Engine | None = None) -> tuple[Any, bool]:
    """The index in ``folder`` when it still matches, vector store included (True), else
    (re)built (False), embedding on ``engine`` (default: this process)."""
    from ..index import build_index, open_index

    store = store or StoreSettings()
    try:
        index = open_index(folder, catalogue, spec, loader=loader, store=store)
        if index.manifest["search"]["ann"] == ann:
            if not spec.lexical:
                index.encoder()  # refuses changed model files
            return index, True
    except (InputError, StaleIndexError, EncoderMismatchError):
        pass
    build_index(catalogue, spec, folder, ann=ann, cache_dir=cache_dir, quiet=quiet,
                loader=loader, store=store, engine=engine)
    return open_index(folder, catalogue, spec, loader=loader), False


def _digest(obj: Any) -> str:
    return hashlib.sha256(json.dumps(obj, sort_keys=True, ensure_ascii=False).encode()
                          ).hexdigest()[:16]


def search_key(manifest: Mapping[str, Any], queries: Mapping[str, str], depth: int,
               threads: int) -> str:
    """What a timed search depends on: the index (not when it was built), the queries in
    order, the depth, the compute threads in force and the timing procedure."""
    index = {k: v for k, v in manifest.items() if k != "build"}
    return _digest({"index": index, "queries": list(queries.items()), "depth": depth,
                    "threads": threads, "warmup": DEFAULT_WARMUP, "trawl": __version__})


def fused_key(part_keys: Sequence[str], depth: int) -> str:
    """What a fused run depends on: its parts' keys in order, the fusion constant, depth."""
    return _digest({"parts": list(part_keys), "rrf_k": RRF_K, "depth": depth,
                    "trawl": __version__})


def previous_search(run_path: Path, name: str, key: str, queries: Mapping[str, str],
                    note: Callable[[str], None] = lambda _why: None
                    ) -> tuple[Run, dict[str, Any]] | None:
    """The run and latency figures an earlier evaluation wrote for the same inputs, when
    the run file is still what it wrote (size and checksum in the sidecar); ``note``
    hears why a run with the same inputs is not reused."""
    sidecar = Path(f"{run_path}.latency.json")
    try:
        latency = json.loads(sidecar.read_text(encoding="utf-8"))
        if not isinstance(latency, dict) or latency.get("inputs") != key:
            return None
        if not stamp_matches(run_path, latency.pop(RUN_STAMP, None)):
            note(f"{run_path} is not the file the last evaluation wrote (size or checksum "
                 "differ, or none recorded)")
            return None
        run = read_run(run_path, name=name)
    except (OSError, ValueError, TrawlError):
        return None
    return Run(name, {q: run.results.get(q, ()) for q in queries}), latency
