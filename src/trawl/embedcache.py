"""Embedding cache: vectors keyed by (encoder fingerprint, SHA-256 of the embedded text).

Stored in one SQLite file in WAL mode. SQLite gives what the index build needs without
extra machinery: each batch is committed as one transaction, so a killed build keeps
every finished batch and never a torn row; two processes writing the same cache are
serialised by SQLite's own lock (``busy_timeout``) while readers keep reading; identical
keys from two writers are harmless (``INSERT OR IGNORE``; equal inputs give equal vectors).
"""

from __future__ import annotations

import contextlib
import hashlib
import os
import sqlite3
from collections.abc import Iterable, Iterator, Sequence
from pathlib import Path

import numpy as np

from .errors import OutputError
from .files import check_writable

CACHE_FILE = "embeddings.sqlite"
BUSY_TIMEOUT_MS = 120_000
MAX_PARAMS = 500  # rows fetched per SELECT ... IN (...)


def default_cache_dir() -> Path:
    """``$TRAWL_CACHE_DIR``, else ``$XDG_CACHE_HOME/trawl``, else ``~/.cache/trawl``."""
    if os.environ.get("TRAWL_CACHE_DIR"):
        return Path(os.environ["TRAWL_CACHE_DIR"]).expanduser()
    base = os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache"
    return Path(base).expanduser() / "trawl"


def check_cache_dir(folder: str | Path) -> None:
    """Refuse, before any work, a cache folder that cannot be created or written."""
    check_writable(folder, "embedding cache folder", folder=True)


def text_key(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


class EmbeddingCache:
    """Get and put float32 vectors for one encoder fingerprint."""

    def __init__(self, folder: str | Path, fingerprint: str) -> None:
        folder = Path(folder)
        self.path = folder / CACHE_FILE
        self.fingerprint = fingerprint
        check_cache_dir(folder)
        try:
            folder.mkdir(parents=True, exist_ok=True)
            self._db = sqlite3.connect(self.path, timeout=BUSY_TIMEOUT_MS / 1000,
                                       isolation_level=None)
            self._db.execute(f"PRAGMA busy_timeout={BUSY_TIMEOUT_MS}")
            self._db.execute("PRAGMA journal_mode=WAL")
            self._db.execute("PRAGMA synchronous=NORMAL")
            self._db.execute("CREATE TABLE IF NOT EXISTS vectors (encoder TEXT NOT NULL, "
                             "text_sha256 TEXT NOT NULL, dim INTEGER NOT NULL, "
                             "vector BLOB NOT NULL, PRIMARY KEY (encoder, text_sha256)) "
                             "WITHOUT ROWID")
        except (OSError, sqlite3.Error) as exc:
            raise self._unusable(exc) from None

    def _unusable(self, exc: BaseException) -> OutputError:
        return OutputError(f"embedding cache {self.path} cannot be used ({exc}); delete that "
                           "file or use another cache folder")

    def get(self, keys: Iterable[str]) -> dict[str, np.ndarray]:
        keys = list(dict.fromkeys(keys))
        found: dict[str, np.ndarray] = {}
        for start in range(0, len(keys), MAX_PARAMS):
            chunk = keys[start:start + MAX_PARAMS]
            rows = self._db.execute(
                f"SELECT text_sha256, vector FROM vectors WHERE encoder = ? AND text_sha256 IN "
                f"({','.join('?' * len(chunk))})", [self.fingerprint, *chunk])
            for key, blob in rows:
                found[key] = np.frombuffer(blob, dtype=np.float32)
        return found

    def put(self, keys: Sequence[str], vectors: np.ndarray) -> None:
        """Store one batch atomically."""
        vectors = np.ascontiguousarray(vectors, dtype=np.float32)
        try:
            with self._transaction():
                self._db.executemany(
                    "INSERT OR IGNORE INTO vectors (encoder, text_sha256, dim, vector) "
                    "VALUES (?, ?, ?, ?)",
                    [(self.fingerprint, k, v.shape[0], v.tobytes())
                     for k, v in zip(keys, vectors)])
        except sqlite3.OperationalError as exc:
            if "locked" in str(exc) or "busy" in str(exc):
                raise
            raise self._unusable(exc) from None

    @contextlib.contextmanager
    def _transaction(self) -> Iterator[None]:
        self._db.execute("BEGIN IMMEDIATE")
        try:
            yield
        except BaseException:
            self._db.execute("ROLLBACK")
            raise
        self._db.execute("COMMIT")

    def close(self) -> None:
        self._db.close()

    def __enter__(self) -> EmbeddingCache:
        return self

    def __exit__(self, *exc) -> None:
        self.close()
