"""Two `trawl index` processes at once: one output folder has one builder; a shared
embedding cache stays whole and gives every writer the same vectors."""

from __future__ import annotations

import json
import re

import numpy as np
import pytest

from trawl.catalogue import load_catalogue
from trawl.index import build_index

from .process_helpers import (STATIC_DIMS, cache_health, cache_rows, index_files,
                              make_catalogue, make_static_model, run_trawl, start_trawl,
                              wait_for)


@pytest.fixture(scope="module")
def spec(tmp_path_factory) -> str:
    return f"static:{make_static_model(tmp_path_factory.mktemp('static') / 'model')}"


@pytest.mark.slow
def test_second_build_of_the_same_folder_exits_2_naming_the_first_builders_pid(spec, tmp_path):
    big = make_catalogue(tmp_path / "big.jsonl", range(20_000))  # seconds of embedding
    small = make_catalogue(tmp_path / "small.jsonl", range(20))
    out = tmp_path / "idx"
    first = start_trawl("index", big, "-e", spec, "-o", out, "--cache-dir", tmp_path / "c1",
                        "-q", "--json")
    try:
        lock = tmp_path / ".idx.lock"
        holds = wait_for(lambda: lock.exists() and lock.read_text().strip() == str(first.pid),
                         timeout=120, proc=first)
        assert holds, f"first build never took the lock: {first.communicate()[1]}"
        second = run_trawl("index", small, "-e", spec, "-o", out, "--cache-dir",
                           tmp_path / "c2", "-q")
        assert first.poll() is None, "first build ended before the second tried; test too small"
        stdout, stderr = first.communicate(timeout=600)
    finally:
        if first.poll() is None:
            first.kill()
    assert second.returncode == 2
    assert second.stdout == ""
    assert re.fullmatch(rf"error: [^\n]* {re.escape(str(out))} is in use by pid {first.pid} "
                        r"[^\n]*\n", second.stderr), second.stderr
    assert cache_rows(tmp_path / "c2") == 0  # refused before any work
    assert first.returncode == 0, stderr  # the first one proceeded undisturbed
    assert json.loads(stdout)["items"] == 20_000

    third = run_trawl("index", small, "-e", spec, "-o", out, "--cache-dir", tmp_path / "c2",
                      "-q", "--json")  # once the first is done, the folder is free again
    assert third.returncode == 0, third.stderr
    assert json.loads(third.stdout)["items"] == 20


@pytest.mark.slow
def test_two_writers_keep_the_shared_embedding_cache_consistent(spec, tmp_path):
    # Overlapping catalogues: 2,000 texts both processes embed and insert at once.
    a = make_catalogue(tmp_path / "a.jsonl", range(0, 5000))
    b = make_catalogue(tmp_path / "b.jsonl", range(3000, 8000))
    both = make_catalogue(tmp_path / "both.jsonl", range(0, 8000))
    shared = tmp_path / "shared-cache"
    procs = [start_trawl("index", cat, "-e", spec, "-o", tmp_path / name, "--cache-dir", shared,
                         "-q", "--json") for cat, name in ((a, "idx-a"), (b, "idx-b"))]
    results = [(p.wait(timeout=600), *p.communicate()) for p in procs]
    for code, _, err in results:
        assert code == 0, err

    verdict, sizes, rows = cache_health(shared)
    assert (verdict, sizes, rows) == ("ok", {STATIC_DIMS * 4}, 8000)  # one row per text

    # Each index equals one built alone with a private cache, bit for bit.
    for cat, name in ((a, "idx-a"), (b, "idx-b")):
        alone = tmp_path / f"{name}-alone"
        build_index(load_catalogue(cat), spec, alone, cache_dir=tmp_path / f"{name}-cache",
                    quiet=True)
        assert index_files(tmp_path / name) == index_files(alone)

    # The shared cache now serves the union without embedding anything.
    union = run_trawl("index", both, "-e", spec, "-o", tmp_path / "idx-both", "--cache-dir",
                      shared, "-q", "--json")
    assert union.returncode == 0, union.stderr
    assert {k: json.loads(union.stdout)[k] for k in ("embedded", "reused")} == {
        "embedded": 0, "reused": 8000}


def test_a_cache_holding_two_vector_sizes_for_one_encoder_is_refused(tmp_path):
    """What a second writer with different weights under the same fingerprint, or a
    damaged cache, would leave: the build stops with the fix instead of mixing sizes."""
    from trawl.errors import TrawlError
    from trawl.embedcache import EmbeddingCache, text_key

    from .retrieval_fakes import FakeLoader, tiny_catalogue

    cat, loader = tiny_catalogue(), FakeLoader()
    odd_text = cat.texts()[5]
    with EmbeddingCache(tmp_path / "c", "fake-weights-1") as cache:
        cache.put([text_key(odd_text)], np.ones((1, 8), dtype=np.float32))
    with pytest.raises(TrawlError, match=r"embedding cache .* holds vectors of sizes \[8, 16\] "
                                         r"for one encoder; delete the cache file and rebuild"):
        build_index(cat, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c", quiet=True,
                    loader=loader)
    assert not (tmp_path / "idx").exists()
