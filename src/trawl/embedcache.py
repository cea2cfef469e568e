"""Embedding cache: vectors keyed by (encoder fingerprint, SHA-256 of the embedded text).

Stored in one SQLite file in WAL mode. SQLite gives what the index build needs without
extra machinery: each batch is committed as one transaction, so a killed build keeps
every finished batch and never a torn row; two processes writing the same cache are
serialised by SQLite's own lock (``busy_timeout``) while readers keep reading; identical
keys from two writers are harmless (``INSERT OR IGNORE``; equal inputs give equal vectors).

``synchronous=NORMAL``: in WAL mode a commit survives the process being killed; a power
cut may lose the last few commits (they are embedded again) but never corrupts the file.

Layout (format 2): vectors are appended to a rowid table and found through a small
unique index on (encoder, 32-byte digest). Format 1 kept the 1 KB vectors inside a
WITHOUT ROWID table keyed by hex text, so every batch of random keys rewrote pages all
over a large B-tree; a 200k-item build spent most of its time there. A format-1 table
found on opening is copied into the new layout once and dropped.
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
TABLE = "vectors_v2"  # format 2: rowid table + unique (encoder, digest) index
OLD_TABLE = "vectors"  # format 1, migrated on open
PAGE_SIZE = 16_384  # new files: a quarter of the pages to touch per batch of random keys
WAL_BYTES = 40 << 20  # checkpoint every 40 MB of WAL: index pages changed often are copied once


CACHE_ENV = "TRAWL_CACHE_DIR"  # the user's choice of cache folder, honoured everywhere


def default_cache_dir() -> Path:
    """``$TRAWL_CACHE_DIR``, else ``$XDG_CACHE_HOME/trawl``, else ``~/.cache/trawl``."""
    if os.environ.get(CACHE_ENV):
        return Path(os.environ[CACHE_ENV]).expanduser()
    base = os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache"
    return Path(base).expanduser() / "trawl"


def check_cache_dir(folder: str | Path) -> None:
    """Refuse, before any work, a cache folder that cannot be created or written."""
    check_writable(folder, "embedding cache folder", folder=True)


def text_key(text: str) -> str:
    return utf8_key(text.encode("utf-8"))


def utf8_key(data: bytes) -> str:
    """``text_key`` of a text already encoded as UTF-8 (a build hashes the bytes it has)."""
    return hashlib.sha256(data).hexdigest()


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
            self._db.execute(f"PRAGMA page_size={PAGE_SIZE}")  # a new file only
            self._db.execute("PRAGMA journal_mode=WAL")
            self._db.execute("PRAGMA synchronous=NORMAL")
            self._db.execute("PRAGMA cache_size=-32768")  # KiB: the key index stays in memory
            page = self._db.execute("PRAGMA page_size").fetchone()[0]
            self._db.execute(f"PRAGMA wal_autocheckpoint={WAL_BYTES // page}")
            self._db.execute(f"CREATE TABLE IF NOT EXISTS {TABLE} (encoder TEXT NOT NULL, "
                             "digest BLOB NOT NULL, vector BLOB NOT NULL)")
            self._db.execute(f"CREATE UNIQUE INDEX IF NOT EXISTS {TABLE}_key "
                             f"ON {TABLE} (encoder, digest)")
            self._migrate_format_1()
        except (OSError, sqlite3.Error) as exc:
            raise self._unusable(exc) from None

    def _migrate_format_1(self) -> None:
        """Copy a format-1 ``vectors`` table (hex text keys) into the new layout, once."""
        if not self._has_table(OLD_TABLE):
            return
        self._db.create_function("trawl_unhex", 1, bytes.fromhex, deterministic=True)
        with self._transaction():
            if self._has_table(OLD_TABLE):  # another process may have migrated meanwhile
                self._db.execute(f"INSERT OR IGNORE INTO {TABLE} (encoder, digest, vector) "
                                 f"SELECT encoder, trawl_unhex(text_sha256), vector "
                                 f"FROM {OLD_TABLE}")
                self._db.execute(f"DROP TABLE {OLD_TABLE}")

    def _has_table(self, name: str) -> bool:
        return self._db.execute("SELECT 1 FROM sqlite_master WHERE type = 'table' AND "
                                "name = ?", (name,)).fetchone() is not None

    def _unusable(self, exc: BaseException) -> OutputError:
        return OutputError(f"embedding cache {self.path} cannot be used ({exc}); delete that "
                           "file or use another cache folder")

    def get(self, keys: Iterable[str]) -> dict[str, np.ndarray]:
        keys = list(dict.fromkeys(keys))
        found: dict[str, np.ndarray] = {}
        for start in range(0, len(keys), MAX_PARAMS):
            chunk = [bytes.fromhex(k) for k in keys[start:start + MAX_PARAMS]]
            rows = self._db.execute(
                f"SELECT digest, vector FROM {TABLE} WHERE encoder = ? AND digest IN "
                f"({','.join('?' * len(chunk))})", [self.fingerprint, *chunk])
            for digest, blob in rows:
                found[digest.hex()] = np.frombuffer(blob, dtype=np.float32)
        return found

    def holds_any(self) -> bool:
        """Whether the cache holds any vector of this encoder (a first build finds none)."""
        return self._db.execute(f"SELECT 1 FROM {TABLE} WHERE encoder = ? LIMIT 1",
                                [self.fingerprint]).fetchone() is not None

    def put(self, keys: Sequence[str], vectors: np.ndarray) -> None:
        """Store one batch atomically (rows are slices of one buffer, not copies)."""
        vectors = np.ascontiguousarray(vectors, dtype=np.float32)
        width = vectors.shape[1] * vectors.itemsize
        raw = memoryview(vectors).cast("B")
        rows = [(self.fingerprint, bytes.fromhex(k), raw[i * width:(i + 1) * width])
                for i, k in enumerate(keys)]
        try:
            with self._transaction():
                self._db.executemany(f"INSERT OR IGNORE INTO {TABLE} (encoder, digest, vector) "
                                     "VALUES (?, ?, ?)", rows)
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
