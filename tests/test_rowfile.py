"""Vectors written row by row into their .npy file (index.rowfile) are the bytes np.save
writes, and an fp32 exact build keeps none of them in memory but the same index."""

from __future__ import annotations

import numpy as np

from tests.retrieval_fakes import FakeLoader, tiny_catalogue
from trawl.index import build, build_index
from trawl.index.rowfile import RowFile
from trawl.stores import StoreSettings


def test_rows_in_any_order_give_the_bytes_np_save_writes(tmp_path):
    matrix = np.random.default_rng(3).standard_normal((37, 5)).astype(np.float32)
    rows = RowFile(tmp_path / "rows.npy", matrix.shape)
    for i in np.random.default_rng(4).permutation(37):
        rows[int(i)] = matrix[i]
    back = rows.finish()
    np.save(tmp_path / "saved.npy", matrix)
    assert (tmp_path / "rows.npy").read_bytes() == (tmp_path / "saved.npy").read_bytes()
    assert np.array_equal(back, matrix)


def test_fp32_exact_build_writes_vectors_in_place_with_the_same_result(tmp_path, monkeypatch):
    cat = tiny_catalogue(40)
    build_index(cat, "minilm", tmp_path / "a", cache_dir=tmp_path / "c1", quiet=True,
                loader=FakeLoader())
    made: list[RowFile] = []
    original = build.RowFile

    def recording(*args):
        made.append(original(*args))
        return made[-1]

    monkeypatch.setattr(build, "RowFile", recording)
    build_index(cat, "minilm", tmp_path / "b", cache_dir=tmp_path / "c2", quiet=True,
                loader=FakeLoader())
    assert len(made) == 1  # the fp32 exact build went through the row file
    assert (tmp_path / "a/vectors.npy").read_bytes() == (tmp_path / "b/vectors.npy").read_bytes()
    build_index(cat, "minilm", tmp_path / "h", cache_dir=tmp_path / "c2", quiet=True,
                loader=FakeLoader(), ann="hnsw", store=StoreSettings())
    assert len(made) == 1  # HNSW needs the matrix in memory: no row file
