"""An index build reads the catalogue in windows: every distinct text is embedded once
even when its repeats fall in later windows, chunks are fixed by the catalogue and the
cache (so a resumed build embeds the same chunks), and the index is the same whatever
the window and chunk sizes."""

from __future__ import annotations

import numpy as np
import pytest

from tests.retrieval_fakes import FakeLoader, files_except_build
from trawl.catalogue import Catalogue, Item
from trawl.index import build, build_index
from trawl.index.rowfile import RowFile


def repeating_catalogue(n: int = 40, distinct: int = 17) -> Catalogue:
    """Item i has text number (7 i) mod ``distinct``: repeats near and far apart."""
    items = tuple(Item(f"it{i:03d}", "faq", f"topic {(7 * i) % distinct}",
                       "word " * ((7 * i) % distinct % 5)) for i in range(n))
    return Catalogue("repeats.jsonl", items)


def small_windows(monkeypatch) -> None:
    monkeypatch.setattr(build, "WINDOW", 7)
    monkeypatch.setattr(build, "EMBED_CHUNK", 3)


def test_repeats_across_windows_are_embedded_once_and_the_index_does_not_change(
        tmp_path, monkeypatch):
    cat = repeating_catalogue()
    whole = build_index(cat, "minilm", tmp_path / "whole", cache_dir=tmp_path / "c1",
                        quiet=True, loader=FakeLoader())
    small_windows(monkeypatch)
    loader = FakeLoader()
    info = build_index(cat, "minilm", tmp_path / "windows", cache_dir=tmp_path / "c2",
                       quiet=True, loader=loader)
    calls = loader.fake.document_calls
    texts = [t for call in calls for t in call]
    assert sorted(texts) == sorted(set(cat.texts()))  # each distinct text once
    assert max(map(len, calls)) == 3 and len(calls) > 40 // 7
    assert (info.embedded, info.reused) == (whole.embedded, whole.reused) == (40, 0)
    assert files_except_build(tmp_path / "windows") == files_except_build(tmp_path / "whole")


def test_a_resumed_windowed_build_embeds_the_chunks_an_uninterrupted_one_would(
        tmp_path, monkeypatch):
    small_windows(monkeypatch)
    cat = repeating_catalogue()
    clean = FakeLoader()
    build_index(cat, "minilm", tmp_path / "clean", cache_dir=tmp_path / "c1", quiet=True,
                loader=clean)
    with pytest.raises(KeyboardInterrupt):
        build_index(cat, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c2", quiet=True,
                    loader=FakeLoader(fail_after_calls=4))
    resumed = FakeLoader()
    info = build_index(cat, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c2",
                       quiet=True, loader=resumed)
    # the chunks committed before the stop are a prefix; the rest come in the same order
    k = len(clean.fake.document_calls) - len(resumed.fake.document_calls)
    assert 1 <= k <= 4
    assert resumed.fake.document_calls == clean.fake.document_calls[k:]
    done = {t for call in clean.fake.document_calls[:k] for t in call}
    assert info.reused == sum(t in done for t in cat.texts()) > 0
    assert files_except_build(tmp_path / "idx") == files_except_build(tmp_path / "clean")


def test_static_models_embed_larger_chunks():
    from trawl.retrievers.spec import parse_spec

    static = parse_spec("static:/models/m2v", check_paths=False)
    assert build._chunk_size(static) == build.STATIC_CHUNK > build.EMBED_CHUNK
    assert build._chunk_size(parse_spec("minilm")) == build.EMBED_CHUNK


def test_rows_written_while_mapped_pages_are_released_are_all_kept(tmp_path, monkeypatch):
    from trawl.index import rowfile

    monkeypatch.setattr(rowfile, "DROP_ROWS", 3)
    matrix = np.random.default_rng(5).standard_normal((2000, 8)).astype(np.float32)
    rows = RowFile(tmp_path / "rows.npy", matrix.shape)
    order = np.random.default_rng(6).permutation(2000)
    for s in range(0, 2000, 7):
        rows.put(order[s:s + 7], matrix[order[s:s + 7]])
    back = rows.finish()
    np.save(tmp_path / "saved.npy", matrix)
    assert (tmp_path / "rows.npy").read_bytes() == (tmp_path / "saved.npy").read_bytes()
    assert np.array_equal(back, matrix)


def test_a_first_build_asks_the_cache_only_for_texts_it_embedded(tmp_path, monkeypatch):
    from trawl.embedcache import EmbeddingCache, text_key

    small_windows(monkeypatch)
    asked: list[str] = []
    original = EmbeddingCache.get

    def recording(self, keys):
        keys = list(keys)
        asked.extend(keys)
        return original(self, keys)

    monkeypatch.setattr(EmbeddingCache, "get", recording)
    cat = repeating_catalogue()
    build_index(cat, "minilm", tmp_path / "a", cache_dir=tmp_path / "c", quiet=True,
                loader=FakeLoader())
    texts = cat.texts()
    earlier = {text_key(t) for i, t in enumerate(texts) if t in texts[:i - i % 7]}
    assert asked and set(asked) <= earlier  # repeats of texts from earlier windows only
    asked.clear()
    info = build_index(cat, "minilm", tmp_path / "b", cache_dir=tmp_path / "c", quiet=True,
                       loader=FakeLoader())
    assert set(asked) == {text_key(t) for t in texts}  # a used cache is asked for all
    assert (info.embedded, info.reused) == (0, 40)


def test_new_cache_files_get_16_kb_pages_and_old_ones_keep_theirs(tmp_path):
    import sqlite3

    from trawl.embedcache import CACHE_FILE, PAGE_SIZE, EmbeddingCache

    (tmp_path / "old").mkdir()
    old = sqlite3.connect(tmp_path / "old" / CACHE_FILE)
    old.execute("PRAGMA page_size=4096")
    old.execute("PRAGMA journal_mode=WAL")
    old.execute("CREATE TABLE vectors_v2 (encoder TEXT NOT NULL, digest BLOB NOT NULL, "
                "vector BLOB NOT NULL)")
    old.close()
    for folder, size in (("old", 4096), ("new", PAGE_SIZE)):
        with EmbeddingCache(tmp_path / folder, "enc") as cache:
            cache.put(["00" * 32], np.ones((1, 4), dtype=np.float32))
        db = sqlite3.connect(tmp_path / folder / CACHE_FILE)
        assert db.execute("PRAGMA page_size").fetchone()[0] == size
        db.close()


def test_a_full_disk_is_an_error_when_the_row_file_is_made(tmp_path, monkeypatch):
    import errno
    import os

    from trawl.index import rowfile

    def full(fd, offset, length):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(rowfile.os, "posix_fallocate", full, raising=False)
    with pytest.raises(OSError, match="No space left"):
        RowFile(tmp_path / "rows.npy", (10, 4))

    def unsupported(fd, offset, length):
        raise OSError(errno.EOPNOTSUPP, os.strerror(errno.EOPNOTSUPP))

    monkeypatch.setattr(rowfile.os, "posix_fallocate", unsupported, raising=False)
    rows = RowFile(tmp_path / "rows.npy", (10, 4))  # such file systems allocate on write
    rows.put([3], np.ones((1, 4), dtype=np.float32))
    assert rows.finish()[3].tolist() == [1, 1, 1, 1]
