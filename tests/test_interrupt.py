"""SIGKILL during `trawl index`: never a half-written index; the rerun resumes to the same bits.

A kill cannot be caught, so nothing in trawl gets to clean up: whatever is on disk at
that instant must already be safe. Each seed kills a real child process at a different
point (start-up, catalogue load, embedding, writing, the final swap), some with a
previous complete index in place. Afterwards the output folder must be absent, the
previous index, or the finished new one; the embedding cache must pass SQLite's
integrity check; and a rerun must reuse every committed vector and produce files
identical to an uninterrupted build (all bytes except the manifest's timing section).
"""

from __future__ import annotations

import json
import random
import shutil
import signal
import time
from dataclasses import dataclass
from pathlib import Path

import pytest

from .process_helpers import (STATIC_DIMS, cache_health, cache_rows, index_files,
                              make_catalogue, make_static_model, run_trawl, start_trawl,
                              wait_for)

N_ITEMS = 6000  # a few seconds of embedding with the static encoder on one core
SEEDS = (1, 2, 3, 4, 5)


@dataclass(frozen=True)
class Setup:
    spec: str
    catalogue: Path
    reference: dict[str, bytes]    # files of an uninterrupted build (timing section dropped)
    previous: Path                 # a complete index of an earlier edition of the catalogue
    seconds: float                 # wall time of the uninterrupted build, start-up included


@pytest.fixture(scope="module")
def setup(tmp_path_factory) -> Setup:
    root = tmp_path_factory.mktemp("interrupt")
    spec = f"static:{make_static_model(root / 'model')}"
    catalogue = make_catalogue(root / "catalogue.jsonl", range(N_ITEMS), edition=1)
    earlier = make_catalogue(root / "earlier.jsonl", range(N_ITEMS), edition=0)
    start = time.monotonic()
    done = run_trawl("index", catalogue, "-e", spec, "-o", root / "reference",
                     "--cache-dir", root / "reference-cache", "-q")
    seconds = time.monotonic() - start
    assert done.returncode == 0, done.stderr
    done = run_trawl("index", earlier, "-e", spec, "-o", root / "previous",
                     "--cache-dir", root / "previous-cache", "-q")
    assert done.returncode == 0, done.stderr
    return Setup(spec, catalogue, index_files(root / "reference"), root / "previous", seconds)


@pytest.mark.slow
@pytest.mark.parametrize("seed", SEEDS)
def test_sigkill_leaves_no_half_written_index_and_the_rerun_is_identical(setup, seed, tmp_path):
    rng = random.Random(seed)
    out, cache = tmp_path / "idx", tmp_path / "cache"
    previous = None
    if seed % 2 == 0:  # an earlier complete index is in place and must survive
        shutil.copytree(setup.previous, out)
        previous = index_files(out, keep_build=True)
    proc = start_trawl("index", setup.catalogue, "-e", setup.spec, "-o", out,
                       "--cache-dir", cache, "-q")
    if seed % 2 == 1:  # mid-embedding: once some chunks are committed
        chunks = rng.randint(1, 8)
        wait_for(lambda: cache_rows(cache) >= chunks * 256, timeout=120, proc=proc)
    else:              # anywhere from start-up to the final rename
        wait_for(lambda: False, timeout=rng.uniform(0, setup.seconds), proc=proc)
    proc.send_signal(signal.SIGKILL)
    proc.wait(timeout=30)

    state = index_files(out, keep_build=True)
    assert state is None or state == previous or index_files(out) == setup.reference, (
        f"seed {seed}: output folder is neither absent, the previous index nor the new one")
    committed = 0
    if (cache / "embeddings.sqlite").exists():
        verdict, sizes, committed = cache_health(cache)
        assert verdict == "ok"
        assert sizes <= {STATIC_DIMS * 4}  # no torn vector

    done = run_trawl("index", setup.catalogue, "-e", setup.spec, "-o", out, "--cache-dir",
                     cache, "-q", "--json")
    assert done.returncode == 0, done.stderr
    info = json.loads(done.stdout)
    assert (info["reused"], info["embedded"]) == (committed, N_ITEMS - committed)
    if seed % 2 == 1:
        assert committed >= 256  # the rerun really resumed
    assert index_files(out) == setup.reference  # bit for bit, timing section aside
    assert sorted(p.name for p in tmp_path.iterdir()) == [".idx.lock", "cache", "idx"]
