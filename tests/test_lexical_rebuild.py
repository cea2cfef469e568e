"""A bm25 index rebuilt from the same catalogue writes the same bytes, whatever the
process's string hashing (bm25s numbers its vocabulary in set order, which follows
PYTHONHASHSEED, so without our sorted numbering two builds differed in every file of
the bm25 folder). Scores stay those of bm25s' own indexing: tests/test_lexical_matches.py
checks them against bm25s 0.3.16 and rank-bm25."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np

from trawl.retrievers.lexical import LexicalIndex, tokenise
from trawl.retrievers.spec import parse_spec

BUILD = """
import sys
from trawl.catalogue import Catalogue, Item
from trawl.index import build_index
titles = ["renew a loan online", "reserve a study room", "pay late fees", "replace a lost card",
          "branch opening hours", "borrow an e-book", "donate books to the branch",
          "print from a laptop", "story time for children", "step-free entrances"]
items = tuple(Item(f"lib{i:02d}", "article", t, f"{t} at the library, item {i}")
              for i, t in enumerate(titles))
build_index(Catalogue("lib.jsonl", items), "bm25", sys.argv[1], cache_dir=sys.argv[2],
            quiet=True)
"""


def _build(folder: Path, cache: Path, seed: str) -> None:
    env = {**os.environ, "PYTHONHASHSEED": seed}
    subprocess.run([sys.executable, "-c", BUILD, str(folder), str(cache)], env=env,
                   check=True, capture_output=True, timeout=120)


def test_rebuilds_under_other_hash_seeds_write_identical_files(tmp_path):
    folders = [tmp_path / f"idx{seed}" for seed in ("1", "2")]
    for folder, seed in zip(folders, ("1", "2")):
        _build(folder, tmp_path / "cache", seed)
    files = sorted(p.relative_to(folders[0]) for p in folders[0].rglob("*") if p.is_file())
    assert any(p.parts[0] == "bm25" for p in files)
    assert files == sorted(p.relative_to(folders[1]) for p in folders[1].rglob("*")
                           if p.is_file())
    for rel in files:
        a, b = (f / rel for f in folders)
        if rel.name == "manifest.json":  # its build section holds times and the host
            a, b = (json.loads(p.read_text()) for p in (a, b))
            a.pop("build"), b.pop("build")
            assert a == b
        else:
            assert a.read_bytes() == b.read_bytes(), rel


def test_sorted_numbering_scores_as_bm25s_own_numbering():
    # Reference: bm25s 0.3.16 indexing the same tokens with its own vocabulary numbering
    import bm25s

    queries = ["renew loan", "lost card fees", "fees online"]
    texts = ["renew a loan online", "pay late fees", "replace a lost card", "", "loan fees"]
    ref = bm25s.BM25(k1=1.5, b=0.75, method="lucene")
    ref.index(tokenise(texts), show_progress=False)
    want = np.stack([ref.get_scores(t) for t in tokenise(queries)])
    got = LexicalIndex.build(texts, parse_spec("bm25")).scores(queries)
    np.testing.assert_array_equal(got, want.astype(np.float32))


def test_building_and_searching_log_nothing_below_warning(tmp_path, caplog):
    """bm25s sets its own logger to DEBUG; in a process where anything configures logging
    (the demo's ONNX export does), 'DEBUG:bm25s:Building index from IDs' reached the
    terminal. Only warnings and errors may pass."""
    import logging

    caplog.set_level(logging.DEBUG)  # as a process with logging configured at DEBUG
    spec = parse_spec("bm25")
    texts = ["renew a loan online", "reserve a study room", "pay late fees"]
    index = LexicalIndex.build(texts, spec)
    index.save(tmp_path)
    LexicalIndex.load(tmp_path, spec).scores(["late fees"])
    assert [r for r in caplog.records
            if r.name.startswith("bm25s") and r.levelno < logging.WARNING] == []
