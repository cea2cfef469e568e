"""Helpers for tests that run `trawl` as child processes (kill, concurrency).

A small static (model2vec) encoder with seeded random token vectors and a generated
catalogue: both deterministic, built in a moment, and large enough to keep a child
process busy for seconds. What the vectors mean does not matter to these tests; that
they are produced by the real static-encoder code path does.
"""

from __future__ import annotations

import json
import os
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

from trawl.embedcache import TABLE as CACHE_TABLE  # the vectors table of the current format

WORDS = ("fare pass bus tram refund lost property ticket route stop card account alert delay "
         "wheelchair ramp timetable zone student senior depot platform bike night weekend "
         "transfer reader validator wallet receipt").split()
TYPES = ("faq", "form", "screen", "article")
STATIC_DIMS = 64


def make_static_model(folder: Path, seed: int = 0) -> Path:
    """A model2vec folder over the bundled tokenizer with seeded random token vectors."""
    from model2vec import StaticModel
    from tokenizers import Tokenizer

    from trawl import bundled

    tok = Tokenizer.from_file(str(bundled.model_path() / "tokenizer.json"))
    vectors = np.random.default_rng(seed).standard_normal(
        (tok.get_vocab_size(), STATIC_DIMS)).astype(np.float32)
    StaticModel(vectors, tok).save_pretrained(str(folder))
    return folder


def make_catalogue(path: Path, ids: range, edition: int = 0) -> Path:
    """Items ``it000000``...; the same id and edition always give the same text."""
    with path.open("w", encoding="utf-8") as fh:
        for i in ids:
            rng = np.random.default_rng([i, edition])
            words = rng.choice(WORDS, 24).tolist()
            fh.write(json.dumps({"id": f"it{i:06d}", "type": TYPES[i % len(TYPES)],
                                 "title": f"{' '.join(words[:4])} {i}",
                                 "text": " ".join(words[4:])}) + "\n")
    return path


def trawl(*args: object) -> list[str]:
    """Command line running the CLI of this checkout in a fresh interpreter."""
    return [sys.executable, "-m", "trawl.cli", *map(str, args)]


def child_env() -> dict[str, str]:
    env = dict(os.environ, HF_HUB_OFFLINE="1", TRANSFORMERS_OFFLINE="1")
    env.pop("TRAWL_CACHE_DIR", None)
    return env


def run_trawl(*args: object, timeout: float = 300) -> subprocess.CompletedProcess:
    return subprocess.run(trawl(*args), capture_output=True, text=True, env=child_env(),
                          timeout=timeout)


def start_trawl(*args: object) -> subprocess.Popen:
    return subprocess.Popen(trawl(*args), stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True, env=child_env())


def index_files(folder: Path, keep_build: bool = False) -> dict[str, bytes] | None:
    """Every file's bytes (None if the folder is absent); the manifest's ``build`` section,
    which records when and how fast, is dropped unless ``keep_build``."""
    if not folder.exists():
        return None
    out = {}
    for p in sorted(folder.rglob("*")):
        if p.is_file():
            data = p.read_bytes()
            if p.name == "manifest.json" and not keep_build:
                manifest = json.loads(data)
                manifest.pop("build")
                data = json.dumps(manifest, sort_keys=True).encode()
            out[str(p.relative_to(folder))] = data
    return out


def cache_rows(cache_dir: Path) -> int:
    """Committed vectors in an embedding cache (0 if it does not exist yet)."""
    path = cache_dir / "embeddings.sqlite"
    if not path.exists():
        return 0
    db = sqlite3.connect(f"file:{path}?mode=ro", uri=True, timeout=30)
    try:
        return db.execute(f"SELECT COUNT(*) FROM {CACHE_TABLE}").fetchone()[0]
    except sqlite3.OperationalError:  # the table is not created yet
        return 0
    finally:
        db.close()


def cache_health(cache_dir: Path) -> tuple[str, set[int], int]:
    """(SQLite integrity verdict, vector sizes in bytes, rows) of an embedding cache; a
    process killed between creating the file and its table leaves no rows."""
    db = sqlite3.connect(cache_dir / "embeddings.sqlite", timeout=30)
    try:
        verdict = db.execute("PRAGMA integrity_check").fetchone()[0]
        if not db.execute("SELECT 1 FROM sqlite_master WHERE name = ?", (CACHE_TABLE,)).fetchone():
            return verdict, set(), 0
        sizes = {n for (n,) in db.execute(f"SELECT DISTINCT length(vector) FROM {CACHE_TABLE}")}
        rows = db.execute(f"SELECT COUNT(*) FROM {CACHE_TABLE}").fetchone()[0]
        return verdict, sizes, rows
    finally:
        db.close()


def wait_for(condition, timeout: float, proc: subprocess.Popen | None = None,
             poll: float = 0.01) -> bool:
    """Poll ``condition`` until true (True), the process ends or time runs out (False)."""
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        if condition():
            return True
        if proc is not None and proc.poll() is not None:
            return condition()
        time.sleep(poll)
    return False
