"""The on-disk index: caching, incremental updates, staleness, atomic replacement, search."""

from __future__ import annotations

import json
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from trawl.index import build as index_build
from trawl.catalogue import Catalogue, Item
from trawl.errors import EncoderMismatchError, InputError, StaleIndexError, UsageError
from trawl.index import HnswParams, build_index, open_index, retrieve
from trawl.runs import rank_order

from .conftest import invoke
from .retrieval_fakes import FakeLoader, files_except_build, text_vector, tiny_catalogue


def test_rebuild_of_unchanged_catalogue_embeds_nothing_and_is_byte_identical(tmp_path):
    cat, loader = tiny_catalogue(), FakeLoader()
    first = build_index(cat, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c", quiet=True,
                        loader=loader)
    before = files_except_build(tmp_path / "idx")
    second = build_index(cat, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c", quiet=True,
                         loader=loader)
    assert (first.embedded, first.reused) == (30, 0)
    assert (second.embedded, second.reused) == (0, 30)
    assert loader.fake.embedded == 30
    assert files_except_build(tmp_path / "idx") == before
    assert second.dim == 16 and second.items == 30 and second.ann == "exact"


def test_editing_items_re_embeds_only_those(tmp_path):
    loader = FakeLoader()
    build_index(tiny_catalogue(), "minilm", tmp_path / "idx", cache_dir=tmp_path / "c",
                quiet=True, loader=loader)
    edited = tiny_catalogue(edit={"it003": "lost card, now blocked", "it017": "print a map"})
    info = build_index(edited, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c", quiet=True,
                       loader=loader)
    assert (info.embedded, info.reused) == (2, 28)
    assert sorted(loader.fake.document_calls[-1]) == sorted(
        [edited.template.render(edited.by_id[i]) for i in ("it003", "it017")])


def test_interrupted_build_leaves_no_folder_and_resumes_to_the_same_bytes(tmp_path, monkeypatch):
    monkeypatch.setattr(index_build, "EMBED_CHUNK", 4)
    cat = tiny_catalogue()
    clean = tmp_path / "clean"
    build_index(cat, "minilm", clean, cache_dir=tmp_path / "c1", quiet=True, loader=FakeLoader())
    with pytest.raises(KeyboardInterrupt):
        build_index(cat, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c2", quiet=True,
                    loader=FakeLoader(fail_after_calls=3))
    assert sorted(p.name for p in tmp_path.iterdir()) == [".clean.lock", ".idx.lock", "c1", "c2",
                                                          "clean"]
    info = build_index(cat, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c2", quiet=True,
                       loader=FakeLoader())
    assert (info.embedded, info.reused) == (30 - 3 * 4, 3 * 4)
    assert files_except_build(tmp_path / "idx") == files_except_build(clean)


def test_failed_rebuild_keeps_the_previous_index(tmp_path):
    build_index(tiny_catalogue(), "minilm", tmp_path / "idx", cache_dir=tmp_path / "c",
                quiet=True, loader=FakeLoader())
    before = files_except_build(tmp_path / "idx")
    with pytest.raises(KeyboardInterrupt):
        build_index(tiny_catalogue(40), "minilm", tmp_path / "idx", cache_dir=tmp_path / "c",
                    quiet=True, loader=FakeLoader(fail_after_calls=0))
    assert files_except_build(tmp_path / "idx") == before


def test_killed_swap_is_undone_on_the_next_build(tmp_path):
    build_index(tiny_catalogue(), "minilm", tmp_path / "idx", cache_dir=tmp_path / "c",
                quiet=True, loader=FakeLoader())
    (tmp_path / "idx").rename(tmp_path / ".idx.replaced-99999")   # killed between renames
    (tmp_path / ".idx.building-99999").mkdir()
    info = build_index(tiny_catalogue(), "minilm", tmp_path / "idx", cache_dir=tmp_path / "c",
                       quiet=True, loader=FakeLoader())
    assert info.reused == 30
    assert sorted(p.name for p in tmp_path.iterdir()) == [".idx.lock", "c", "idx"]


def test_second_builder_of_the_same_folder_is_refused_naming_the_pid(tmp_path, monkeypatch):
    import os

    monkeypatch.setenv("TRAWL_CACHE_DIR", str(tmp_path / "c"))
    (tmp_path / "cat.jsonl").write_text('{"id": "a", "type": "faq", "title": "Late fees"}\n')
    with index_build._build_lock(tmp_path / "idx"):
        result = invoke(["index", tmp_path / "cat.jsonl", "-e", "bm25", "-o", tmp_path / "idx"])
    assert result.exit_code == 2
    assert result.stderr == (f"error: index folder {tmp_path / 'idx'} is in use by pid "
                             f"{os.getpid()} (another build is writing it); wait for it to "
                             "finish or choose another -o\n")
    assert not (tmp_path / "idx").exists()


def test_refuses_to_replace_a_folder_that_is_not_an_index(tmp_path):
    (tmp_path / "docs").mkdir()
    (tmp_path / "docs" / "notes.txt").write_text("keep me")
    with pytest.raises(UsageError, match="exists and is not a trawl index"):
        build_index(tiny_catalogue(), "bm25", tmp_path / "docs", cache_dir=tmp_path / "c")
    assert (tmp_path / "docs" / "notes.txt").read_text() == "keep me"


@pytest.mark.parametrize("kwargs, message", [
    ({"ann": "ivf"}, "ann='ivf' is not one of: exact, hnsw"),
    ({"ann": "hnsw", "spec": "bm25"}, "ann='hnsw' applies to dense encoders"),
    ({"hnsw": HnswParams()}, "HNSW parameters were given but the search is not hnsw"),
    ({"batch_size": 0}, "batch size 0 must be >= 1"),
])
def test_conflicting_options_are_rejected_before_any_work(tmp_path, kwargs, message):
    spec = kwargs.pop("spec", "minilm")
    loader = FakeLoader()
    with pytest.raises(UsageError, match=message):
        build_index(tiny_catalogue(), spec, tmp_path / "idx", cache_dir=tmp_path / "c",
                    loader=loader, **kwargs)
    assert loader.fake is None and not tmp_path.joinpath("idx").exists()


# --- staleness ----------------------------------------------------------------------------------

@pytest.fixture
def built(tmp_path):
    loader = FakeLoader()
    build_index(tiny_catalogue(), "minilm", tmp_path / "idx", cache_dir=tmp_path / "c",
                quiet=True, loader=loader)
    return tmp_path / "idx", loader


def test_changed_catalogue_is_refused_with_the_fix(built):
    folder, loader = built
    with pytest.raises(StaleIndexError) as err:
        open_index(folder, tiny_catalogue(edit={"it001": "new"}), loader=loader)
    assert f"index {folder} is stale: tiny.jsonl has changed since it was built" in str(err.value)
    assert f"update it with `trawl index tiny.jsonl -e minilm -o {folder}`" in str(err.value)


def test_other_template_is_refused(built):
    folder, loader = built
    with pytest.raises(StaleIndexError, match="embeds items with template '{title}\\\\n{text}', "
                                              "not '{title}'"):
        open_index(folder, tiny_catalogue().with_template("{title}"), loader=loader)


def test_other_encoder_is_refused(built):
    folder, loader = built
    with pytest.raises(EncoderMismatchError, match=f"index {folder} was built with encoder "
                                                   "minilm, not minilm-int8"):
        open_index(folder, spec="minilm-int8", loader=loader)
    assert open_index(folder, tiny_catalogue(), spec="minilm", loader=loader).spec.kind == "minilm"


def test_changed_model_weights_are_refused_at_search(built):
    folder, _ = built
    index = open_index(folder, loader=FakeLoader(fingerprint="fake-weights-2"))
    with pytest.raises(EncoderMismatchError, match="model files of encoder minilm have changed"):
        index.search({"q": "late fees"}, k=3)


def test_folder_without_manifest_is_not_an_index(tmp_path):
    with pytest.raises(InputError, match="not a trawl index"):
        open_index(tmp_path)


# --- search -------------------------------------------------------------------------------------

def test_exact_search_equals_numpy_brute_force(tmp_path):
    cat = tiny_catalogue(200)
    loader = FakeLoader(dim=24)
    build_index(cat, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c", quiet=True,
                loader=loader)
    queries = {f"q{i}": f"question {i}" for i in range(40)}
    run = open_index(tmp_path / "idx", cat, loader=loader).search(queries, k=10, quiet=True)

    def unit(v):
        return v / np.linalg.norm(v)
    docs = np.stack([unit(text_vector(t, 24)) for t in cat.texts()])
    for qid, text in queries.items():
        scores = docs @ unit(text_vector("query: " + text, 24))
        expect = np.argsort(-scores, kind="stable")[:10]  # no ties among Gaussian vectors
        assert [i for i, _ in run.results[qid]] == [cat.ids[j] for j in expect]
        np.testing.assert_allclose([s for _, s in run.results[qid]], scores[expect], atol=1e-5)


def test_ties_are_broken_by_item_id_descending_across_the_cut_off(tmp_path):
    # eight items share one text, so they tie exactly; which two make the top-2 must not
    # depend on faiss internals
    items = tuple(Item(f"dup{i}", "faq", "same title", "same text") for i in range(8))
    cat = Catalogue("dups.jsonl", items + (Item("zz", "faq", "other", "x"),))
    loader = FakeLoader()
    build_index(cat, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c", quiet=True,
                loader=loader)
    index = open_index(tmp_path / "idx", loader=loader)
    full = index.search({"q": "anything"}, k=9, quiet=True).results["q"]
    top = index.search({"q": "anything"}, k=2, quiet=True).results["q"]
    assert full == rank_order(full)
    dups = [i for i, _ in full if i.startswith("dup")]
    assert dups == [f"dup{i}" for i in range(7, -1, -1)]
    assert [i for i, _ in top] == [i for i, _ in full[:2]]


def test_k_beyond_the_catalogue_names_both_numbers(built):
    folder, loader = built
    with pytest.raises(UsageError, match="^31 results per query asked for, but index .* "
                                         "holds 30 items; ask for at most 30$"):
        open_index(folder, loader=loader).search({"q": "x"}, k=31)


def test_empty_items_index_and_search_fine(tmp_path):
    items = (Item("e1", "form", "", ""), Item("e2", "form", "", ""),
             Item("a", "faq", "late fees", "what a late return costs"))
    cat = Catalogue("e.jsonl", items)
    for spec in ("bm25", "minilm"):
        loader = FakeLoader()
        build_index(cat, spec, tmp_path / spec, cache_dir=tmp_path / "c", quiet=True,
                    loader=loader)
        run = open_index(tmp_path / spec, cat, loader=loader).search({"q": "late fees"}, k=3)
        # bm25 lists only items sharing a word with the query; dense ranks every item
        want = ["a"] if spec == "bm25" else ["a", "e1", "e2"]
        assert sorted(i for i, _ in run.results["q"]) == want


def test_hnsw_build_is_deterministic_and_finds_the_exact_neighbours_on_a_small_set(tmp_path):
    cat = tiny_catalogue(150)
    for name in ("h1", "h2"):
        build_index(cat, "minilm", tmp_path / name, ann="hnsw", cache_dir=tmp_path / "c",
                    quiet=True, loader=FakeLoader(), hnsw=HnswParams(m=16))
    assert files_except_build(tmp_path / "h1") == files_except_build(tmp_path / "h2")
    info = open_index(tmp_path / "h1").info
    assert info.ann_params == {"metric": "inner_product", "m": 16, "ef_construction": 200,
                               "ef_search": 128}
    build_index(cat, "minilm", tmp_path / "ex", cache_dir=tmp_path / "c", quiet=True,
                loader=FakeLoader())
    queries = {f"q{i}": f"question {i}" for i in range(20)}
    loader = FakeLoader()
    approx = open_index(tmp_path / "h1", loader=loader).search(queries, 10, quiet=True)
    exact = open_index(tmp_path / "ex", loader=loader).search(queries, 10, quiet=True)
    # 150 items with ef_search 128 is nearly a full scan: the same items come back; scores
    # agree to float32 rounding (faiss computes them with different kernels)
    for qid in queries:
        assert [i for i, _ in approx.results[qid]] == [i for i, _ in exact.results[qid]]
        np.testing.assert_allclose([s for _, s in approx.results[qid]],
                                   [s for _, s in exact.results[qid]], atol=1e-6)


def test_index_info_and_manifest_describe_the_build(built):
    folder, _ = built
    m = json.loads((folder / "manifest.json").read_text())
    assert m["encoder"] == {"spec": "minilm", "kind": "minilm", "fingerprint": "fake-weights-1",
                            "dim": 16, "normalised": True}
    assert m["catalogue"]["items"] == 30 and m["catalogue"]["template"] == "{title}\n{text}"
    assert set(m["versions"]) == {"trawl", "torch", "transformers", "sentence-transformers",
                                  "numpy", "faiss-cpu"}
    assert set(m["build"]) == {"created_at", "engine", "embedded", "reused", "seconds",
                               "items_per_s"}
    assert m["build"]["engine"] == "local"
    assert (folder / "ids.txt").read_text().split() == tiny_catalogue().ids
    assert np.load(folder / "vectors.npy").shape == (30, 16)


# --- retrieve -------------------------------------------------------------------------------------

def test_retrieve_builds_once_then_reuses_the_index(tmp_path):
    cat, loader = tiny_catalogue(), FakeLoader()
    run1 = retrieve(cat, "minilm", {"q": "late fees"}, k=100, cache_dir=tmp_path, loader=loader)
    calls = len(loader.fake.document_calls)
    run2 = retrieve(cat, "minilm", {"q": "late fees"}, k=5, cache_dir=tmp_path, loader=loader)
    assert len(loader.fake.document_calls) == calls == 1
    assert len(run1.results["q"]) == 30                     # k capped at the catalogue size
    assert run2.results["q"] == run1.results["q"][:5]
    assert run1.name == "minilm"
    edited = replace(cat, items=cat.items[:-1])
    run3 = retrieve(edited, "minilm", {"q": "late fees"}, cache_dir=tmp_path, loader=loader)
    assert len(run3.results["q"]) == 29
    assert len(loader.fake.document_calls) == 1              # all texts were cached already


def test_retrieve_with_bm25_needs_no_encoder(tmp_path):
    run = retrieve(tiny_catalogue(), "bm25", {"q": "late fees"}, k=3, cache_dir=tmp_path)
    # items 2, 12 and 22 are the "late fees N" ones; "2" is too short to be a token, so
    # it002 is the shortest and wins; 12 and 22 tie exactly and the higher id comes first
    assert [i for i, _ in run.results["q"]] == ["it002", "it022", "it012"]
    scores = [s for _, s in run.results["q"]]
    assert scores[0] > scores[1] == scores[2] > 0


class _Interrupting:
    """Wraps a real encoder; raises after ``calls`` document batches (a simulated kill)."""

    def __init__(self, encoder, calls: int) -> None:
        self.inner, self.calls, self.spec = encoder, calls, encoder.spec
        self.fingerprint = encoder.fingerprint

    def encode_documents(self, texts, batch_size=32):
        if self.calls == 0:
            raise KeyboardInterrupt("simulated interruption")
        self.calls -= 1
        return self.inner.encode_documents(texts, batch_size)


@pytest.mark.slow
def test_resumed_build_with_the_real_model_is_bit_identical(tmp_path, monkeypatch):
    # Batch composition changes float rounding in a transformer, so a resumed build is only
    # identical if it embeds the same chunks in the same batches; this checks it does.
    from trawl.retrievers.loading import default_loader

    monkeypatch.setattr(index_build, "EMBED_CHUNK", 8)
    cat = tiny_catalogue(40)
    real = default_loader()
    build_index(cat, "minilm", tmp_path / "clean", cache_dir=tmp_path / "c1", quiet=True,
                batch_size=3, loader=real)

    class Loader(FakeLoader):
        def encoder(self, spec):
            return _Interrupting(real.encoder(spec), calls=2)

    with pytest.raises(KeyboardInterrupt):
        build_index(cat, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c2", quiet=True,
                    batch_size=3, loader=Loader())
    info = build_index(cat, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c2", quiet=True,
                       batch_size=3, loader=real)
    assert (info.embedded, info.reused) == (40 - 16, 16)
    assert files_except_build(tmp_path / "idx") == files_except_build(tmp_path / "clean")


def _key(n: int) -> str:
    from trawl.embedcache import text_key

    return text_key(f"k{n}")  # the cache is keyed by SHA-256 digests of texts


def _write_many(folder: str, worker: int) -> None:
    from trawl.embedcache import EmbeddingCache

    with EmbeddingCache(folder, "enc") as cache:
        for batch in range(40):
            ns = [(worker * 20 + batch * 3 + j) % 150 for j in range(5)]
            cache.put([_key(n) for n in ns], np.stack([np.full(4, n, np.float32) for n in ns]))


def test_embedding_cache_stays_consistent_with_two_writers(tmp_path):
    import multiprocessing

    from trawl.embedcache import EmbeddingCache

    ctx = multiprocessing.get_context("spawn")
    procs = [ctx.Process(target=_write_many, args=(str(tmp_path), w)) for w in (0, 1)]
    for p in procs:
        p.start()
    for p in procs:
        p.join(60)
    assert [p.exitcode for p in procs] == [0, 0]
    with EmbeddingCache(tmp_path, "enc") as cache:
        expected = {(w * 20 + b * 3 + j) % 150 for w in (0, 1) for b in range(40)
                    for j in range(5)}
        found = cache.get([_key(n) for n in sorted(expected)] + [_key(-1)])
        assert set(found) == {_key(n) for n in expected}
        assert all(found[_key(n)].tolist() == [n] * 4 for n in expected)
    with EmbeddingCache(tmp_path, "other") as other:
        assert other.get([_key(1)]) == {}  # keys belong to one encoder fingerprint


def test_embedding_cache_moves_a_format_1_table_into_the_new_layout(tmp_path):
    import sqlite3

    from trawl.embedcache import CACHE_FILE, EmbeddingCache, text_key

    # a cache file as format 1 wrote it: hex text keys in a WITHOUT ROWID table
    old = sqlite3.connect(tmp_path / CACHE_FILE)
    old.execute("CREATE TABLE vectors (encoder TEXT NOT NULL, text_sha256 TEXT NOT NULL, "
                "dim INTEGER NOT NULL, vector BLOB NOT NULL, PRIMARY KEY (encoder, "
                "text_sha256)) WITHOUT ROWID")
    vectors = np.random.default_rng(0).standard_normal((3, 5)).astype(np.float32)
    keys = [text_key(f"text {i}") for i in range(3)]
    old.executemany("INSERT INTO vectors VALUES ('enc', ?, 5, ?)",
                    [(k, v.tobytes()) for k, v in zip(keys, vectors)])
    old.commit()
    old.close()
    with EmbeddingCache(tmp_path, "enc") as cache:
        found = cache.get(keys)
        assert [found[k].tobytes() for k in keys] == [v.tobytes() for v in vectors]  # bit-exact
        cache.put([text_key("new")], vectors[:1])
    with EmbeddingCache(tmp_path, "enc") as cache:  # reopening finds nothing left to move
        assert len(cache.get([*keys, text_key("new")])) == 4
    tables = sqlite3.connect(tmp_path / CACHE_FILE).execute(
        "SELECT name FROM sqlite_master WHERE type = 'table'").fetchall()
    assert tables == [("vectors_v2",)]
