"""Indexes with int8 and binary vector stores: built, recorded in the manifest, searched,
and refused when opened with other store settings."""

from __future__ import annotations

import json

import numpy as np
import pytest

from trawl.errors import StaleIndexError, UsageError
from trawl.index import build_index, open_index
from trawl.index.manifest import HNSW_FILE
from trawl.stores import INT8_FILE, StoreSettings

from .retrieval_fakes import FakeLoader, tiny_catalogue


def build(tmp_path, kind: str, name: str | None = None, factor: int = 4, **kw):
    loader = FakeLoader(dim=64)
    info = build_index(tiny_catalogue(200), "minilm", tmp_path / (name or kind),
                       cache_dir=tmp_path / "cache", quiet=True, loader=loader,
                       store=StoreSettings(kind, rescore_factor=factor), **kw)
    return info, loader


def test_int8_store_is_recorded_and_a_quarter_of_fp32(tmp_path):
    fp32, _ = build(tmp_path, "fp32")
    int8, _ = build(tmp_path, "int8")
    manifest = json.loads((tmp_path / "int8" / "manifest.json").read_text())
    assert manifest["store"]["kind"] == "int8" and manifest["store"]["files"] == [INT8_FILE]
    assert not (tmp_path / "int8" / "vectors.npy").exists()
    assert int8.store == "int8" and fp32.store == "fp32"
    assert int8.vector_bytes * 4 == fp32.vector_bytes == 200 * 64 * 4


def test_stores_rank_like_fp32(tmp_path):
    # Same fake vectors in every store: int8 keeps the top 10 nearly intact (bar: common
    # practice, no source); binary whose re-scoring depth covers the whole catalogue
    # (20 x 10 = 200 items) re-scores every item with the same int8 codes, so it must
    # return exactly the int8 store's ranking.
    queries = {f"q{i}": f"question number {i}" for i in range(20)}
    runs = {}
    for kind, factor in (("fp32", 4), ("int8", 4), ("binary", 20)):
        _, loader = build(tmp_path, kind, factor=factor)
        runs[kind] = open_index(tmp_path / kind, loader=loader).search(queries, 10, quiet=True)
    overlap = np.mean([len({i for i, _ in runs["int8"].results[q]}
                           & {i for i, _ in runs["fp32"].results[q]}) / 10 for q in queries])
    assert overlap >= 0.95
    for q in queries:
        assert [i for i, _ in runs["binary"].results[q]] == [i for i, _ in runs["int8"].results[q]]
        np.testing.assert_allclose([s for _, s in runs["binary"].results[q]],
                                   [s for _, s in runs["int8"].results[q]], atol=1e-5)


def test_opening_an_int8_index_with_fp32_settings_is_refused_with_the_rebuild(tmp_path):
    _, loader = build(tmp_path, "int8")
    with pytest.raises(StaleIndexError, match=r"keeps int8 vectors, not fp32; .* rebuild it: "
                                              r"`trawl index .* -e minilm -o .* --store fp32`"):
        open_index(tmp_path / "int8", loader=loader, store=StoreSettings("fp32"))
    assert open_index(tmp_path / "int8", loader=loader, store=StoreSettings("int8")).ids


def test_an_fp32_index_opened_with_binary_settings_is_refused(tmp_path):
    _, loader = build(tmp_path, "fp32")
    with pytest.raises(StaleIndexError, match="keeps fp32 vectors, not binary"):
        open_index(tmp_path / "fp32", loader=loader, store=StoreSettings("binary"))


def test_binary_store_with_hnsw_or_any_store_with_bm25_is_refused_before_work(tmp_path):
    with pytest.raises(UsageError, match="'binary' is scanned by Hamming distance .* with "
                                         "ann='hnsw' use store 'fp32' or 'int8'"):
        build(tmp_path, "binary", ann="hnsw")
    with pytest.raises(UsageError, match="bm25 keeps an inverted index"):
        build_index(tiny_catalogue(), "bm25", tmp_path / "b", quiet=True,
                    store=StoreSettings("binary"))
    assert not (tmp_path / "binary").exists() and not (tmp_path / "b").exists()


def test_int8_hnsw_walks_8_bit_codes_and_finds_what_the_exact_int8_store_finds(tmp_path):
    # The graph holds 1-byte codes where the fp32 graph holds 4-byte floats; at the default
    # settings on 200 items the graph search must return the exhaustive int8 search's top 10
    # (HNSW at ef_search 128 over 200 items visits nearly all of them).
    queries = {f"q{i}": f"question number {i}" for i in range(20)}
    _, loader = build(tmp_path, "int8", name="int8-hnsw", ann="hnsw")
    build(tmp_path, "fp32", name="fp32-hnsw", ann="hnsw")
    build(tmp_path, "int8")
    manifest = json.loads((tmp_path / "int8-hnsw" / "manifest.json").read_text())
    assert manifest["store"]["kind"] == "int8" and manifest["search"]["ann"] == "hnsw"
    for kind in ("int8", "fp32"):  # only the graph is searched: no store file beside it
        files = sorted(p.name for p in (tmp_path / f"{kind}-hnsw").iterdir())
        assert files == sorted([HNSW_FILE, "ids.txt", "manifest.json"])
    graph = {k: (tmp_path / f"{k}-hnsw" / HNSW_FILE).stat().st_size for k in ("int8", "fp32")}
    # 3 bytes saved a dimension, less the quantiser's per-dimension ranges and headers
    assert graph["fp32"] - graph["int8"] >= 0.9 * 200 * 64 * 3
    graph_run = open_index(tmp_path / "int8-hnsw", loader=loader).search(queries, 10, quiet=True)
    exact = open_index(tmp_path / "int8", loader=loader).search(queries, 10, quiet=True)
    for q in queries:
        assert [i for i, _ in graph_run.results[q]] == [i for i, _ in exact.results[q]]


# --- systems that ask for a store (eval, demo) ----------------------------------------------------

def test_system_store_options_name_the_quantised_vectors():
    from trawl.pipeline.systems import parse_system

    s = parse_system("minilm;store=int8")
    assert (s.name, str(s.spec), s.store) == ("minilm.vectors-int8", "minilm", StoreSettings("int8"))
    b = parse_system("minilm-int8;store=binary;rescore=fp32")
    assert b.name == "minilm-int8.vectors-binary-fp32"
    assert b.store == StoreSettings("binary", "fp32")
    assert parse_system("fast=minilm-onnx;store=binary").name == "fast"
    assert parse_system("minilm").store == StoreSettings()
    with pytest.raises(UsageError, match="rescore= applies to store=binary only"):
        parse_system("minilm;rescore=fp32")
    with pytest.raises(UsageError, match="store=int8 applies to dense encoders"):
        parse_system("bm25;store=int8")
    with pytest.raises(UsageError, match="not one of: fp32, int8, binary"):
        parse_system("minilm;store=int4")


def test_evaluation_rebuilds_an_index_kept_with_another_store(tmp_path):
    from trawl.pipeline.reuse import open_or_build

    cat, loader = tiny_catalogue(), FakeLoader()
    folder = tmp_path / "idx"
    first, reused = open_or_build(cat, parse_dense(), folder, "exact", tmp_path / "c", True,
                                  loader, StoreSettings("int8"))
    assert not reused and first.manifest["store"]["kind"] == "int8"
    same, reused = open_or_build(cat, parse_dense(), folder, "exact", tmp_path / "c", True,
                                 loader, StoreSettings("int8"))
    assert reused
    other, reused = open_or_build(cat, parse_dense(), folder, "exact", tmp_path / "c", True,
                                  loader, StoreSettings("fp32"))
    assert not reused and other.manifest["store"]["kind"] == "fp32"


def parse_dense():
    from trawl.retrievers.spec import parse_spec

    return parse_spec("minilm")


def test_systems_say_what_is_quantised_and_latency_says_when_the_machine_was_busy(tmp_path):
    from trawl.pipeline.assembly import latency_entry, system_entry
    from trawl.pipeline.reuse import open_or_build
    from trawl.pipeline.systems import parse_system, quantised

    assert [quantised(parse_system(v)) for v in
            ("minilm", "minilm-int8", "minilm;store=binary", "minilm-onnx-int8;store=int8")] == \
        ["none", "model", "vectors", "model and vectors"]
    cat, loader = tiny_catalogue(), FakeLoader()
    system = parse_system("minilm;store=int8")
    index, _ = open_or_build(cat, system.spec, tmp_path / "idx", "exact", tmp_path / "c", True,
                             loader, system.store)
    entry = system_entry(system, {system.name: index}, cat)
    assert (entry.quantised, entry.store, entry.vector_bytes) == ("vectors", "int8", 30 * 16)
    busy = latency_entry({"p50_ms": 3.0, "threads": 1, "busy": True, "cores": 2,
                          "load_before": [5.2, 4.0, 3.0], "load_after": [6.1, 4.1, 3.0]})
    assert (busy.threads, busy.load, busy.busy) == (1, 6.1, True)


def test_eval_refuses_a_binary_store_with_hnsw_before_any_work(tmp_path):
    from trawl.pipeline import JudgmentSet, evaluate

    gold = JudgmentSet("gold", {"q1": "late fees"}, {"q1": {"a": 1}})
    with pytest.raises(UsageError, match="'binary' is scanned by Hamming distance"):
        evaluate(tiny_catalogue(), [gold], ["minilm", "minilm;store=binary"], tmp_path / "out",
                 ann="hnsw", cache_dir=tmp_path / "c")
    assert not (tmp_path / "out").exists() and not (tmp_path / "c").exists()
