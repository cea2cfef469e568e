"""ONNX Runtime encoders checked against the libraries they stand in for: torch on the same
tokens, the torch encoder (sentence-transformers' encode) on every Cranfield item, and
sentence-transformers' own pooling module on a tiny hand-built ONNX model."""

from __future__ import annotations

import json
import shutil

import numpy as np
import pytest

from trawl import bundled
from trawl.catalogue import load_catalogue
from trawl.errors import UsageError
from trawl.retrievers import onnx as onnx_enc
from trawl.retrievers.loading import EncoderLoader
from trawl.retrievers.onnx_export import INT8_FILE, MODEL_FILE, cached_export, export_note
from trawl.retrievers.spec import EncoderSpec

TINY_VOCAB = 30522   # the bundled tokenizer's vocabulary, so its tokenizer.json can be reused
TINY_DIM = 8


def tiny_onnx_folder(folder, pooling: dict | None = None):
    """A folder with a two-table ONNX model (token and type embeddings added) and the
    bundled model's tokenizer: small enough to build in a test, real enough to run."""
    import onnx
    from onnx import TensorProto, helper, numpy_helper

    rng = np.random.default_rng(7)
    words = numpy_helper.from_array(rng.standard_normal((TINY_VOCAB, TINY_DIM)).astype(np.float32),
                                    "words")
    types = numpy_helper.from_array(rng.standard_normal((2, TINY_DIM)).astype(np.float32), "types")
    inputs = [helper.make_tensor_value_info(n, TensorProto.INT64, ["batch", "tokens"])
              for n in ("input_ids", "attention_mask", "token_type_ids")]
    output = helper.make_tensor_value_info("token_embeddings", TensorProto.FLOAT,
                                           ["batch", "tokens", TINY_DIM])
    nodes = [helper.make_node("Gather", ["words", "input_ids"], ["w"]),
             helper.make_node("Gather", ["types", "token_type_ids"], ["t"]),
             helper.make_node("Add", ["w", "t"], ["token_embeddings"])]
    graph = helper.make_graph(nodes, "tiny", inputs, [output], [words, types])
    model = helper.make_model(graph, opset_imports=[helper.make_opsetid("", 17)])
    model.ir_version = 8
    folder.mkdir(parents=True, exist_ok=True)
    onnx.save(model, str(folder / MODEL_FILE))
    shutil.copyfile(bundled.model_path() / "tokenizer.json", folder / "tokenizer.json")
    if pooling is not None:
        (folder / "1_Pooling").mkdir()
        (folder / "1_Pooling" / "config.json").write_text(json.dumps(pooling))
    return folder, words, types


def test_mean_pooling_equals_sentence_transformers_pooling(tmp_path):
    # Reference: sentence-transformers' Pooling module (mean over unmasked tokens) applied
    # to the same token vectors, then L2-normalised as its Normalize module does.
    import torch
    from sentence_transformers.sentence_transformer.modules import Pooling

    folder, _, _ = tiny_onnx_folder(tmp_path / "tiny")
    encoder = onnx_enc.OnnxEncoder(EncoderSpec("onnx", str(folder)), EncoderLoader())
    texts = ["boundary layer", "a much longer query about shock waves on thin wings", "x"]
    ours = encoder.encode_queries(texts, batch_size=2)

    feed = onnx_enc._padded(encoder.tokenizer().encode_batch(texts))
    session = encoder._session()
    tokens = session.run(None, feed)[0]
    pooled = Pooling(TINY_DIM, "mean")({"token_embeddings": torch.from_numpy(tokens),
                                        "attention_mask": torch.from_numpy(feed["attention_mask"])})
    reference = torch.nn.functional.normalize(pooled["sentence_embedding"], dim=1).numpy()
    np.testing.assert_allclose(ours, reference, atol=1e-6)


def test_cls_pooling_takes_the_first_token(tmp_path):
    # Reference: sentence-transformers' Pooling module in "cls" mode on the same tokens.
    import torch
    from sentence_transformers.sentence_transformer.modules import Pooling

    folder, _, _ = tiny_onnx_folder(tmp_path / "tiny", {"pooling_mode_cls_token": True})
    encoder = onnx_enc.OnnxEncoder(EncoderSpec("onnx", str(folder)), EncoderLoader())
    texts = ["wing flutter", "heat transfer in a laminar boundary layer"]
    ours = encoder.encode_documents(texts)
    feed = onnx_enc._padded(encoder.tokenizer().encode_batch(texts))
    tokens = encoder._session().run(None, feed)[0]
    pooled = Pooling(TINY_DIM, "cls")({"token_embeddings": torch.from_numpy(tokens),
                                       "attention_mask": torch.from_numpy(feed["attention_mask"])})
    reference = torch.nn.functional.normalize(pooled["sentence_embedding"], dim=1).numpy()
    np.testing.assert_allclose(ours, reference, atol=1e-6)


def test_batching_and_order_do_not_change_vectors(tmp_path):
    folder, _, _ = tiny_onnx_folder(tmp_path / "tiny")
    encoder = onnx_enc.OnnxEncoder(EncoderSpec("onnx", str(folder)), EncoderLoader())
    texts = ["one", "two words", "three words here", "and a fourth, longer, text"]
    whole = encoder.encode_documents(texts, batch_size=32)
    single = np.vstack([encoder.encode_documents([t], batch_size=1) for t in texts])
    np.testing.assert_allclose(whole, single, atol=1e-6)


def test_truncates_at_the_models_length(tmp_path):
    folder, _, _ = tiny_onnx_folder(tmp_path / "tiny")
    (folder / "sentence_bert_config.json").write_text('{"max_seq_length": 16}')
    encoder = onnx_enc.OnnxEncoder(EncoderSpec("onnx", str(folder)), EncoderLoader())
    long_text = " ".join(["pressure"] * 100)
    assert len(encoder.tokenizer().encode(long_text).ids) == 16


def test_user_folder_without_tokenizer_is_refused(tmp_path):
    folder, _, _ = tiny_onnx_folder(tmp_path / "tiny")
    (folder / "tokenizer.json").unlink()
    encoder = onnx_enc.OnnxEncoder(EncoderSpec("onnx", str(folder)), EncoderLoader())
    with pytest.raises(UsageError, match="has no tokenizer.json"):
        encoder.encode_queries(["q"])


def test_unsupported_pooling_is_refused(tmp_path):
    folder, _, _ = tiny_onnx_folder(tmp_path / "tiny", {"pooling_mode_max_tokens": True})
    encoder = onnx_enc.OnnxEncoder(EncoderSpec("onnx", str(folder)), EncoderLoader())
    with pytest.raises(UsageError, match="pooling .* not supported"):
        encoder.encode_queries(["q"])


def test_fingerprints_separate_runtime_and_quantisation(tmp_path):
    loader = EncoderLoader()
    from trawl.retrievers.dense import TransformerEncoder

    prints = {onnx_enc.OnnxEncoder(EncoderSpec("minilm-onnx"), loader, tmp_path).fingerprint,
              onnx_enc.OnnxEncoder(EncoderSpec("minilm-onnx-int8"), loader, tmp_path).fingerprint,
              TransformerEncoder(EncoderSpec("minilm"), loader).fingerprint}
    assert len(prints) == 3


def test_threads_setting_is_restored():
    before = onnx_enc.set_threads(1)
    try:
        assert onnx_enc.get_threads() == 1
    finally:
        onnx_enc.set_threads(before)
    assert onnx_enc.get_threads() == before


# --- the bundled model, exported for real (slow: loads torch and exports once) ---------------------

@pytest.fixture(scope="module")
def export_root(tmp_path_factory):
    return tmp_path_factory.mktemp("onnx-cache")


@pytest.fixture(scope="module")
def exported(export_root):
    loader = EncoderLoader()
    path = bundled.model_path()
    return cached_export(path, loader.digest(path), export_root)


@pytest.mark.slow
def test_export_is_cached_and_recorded(exported, export_root):
    loader = EncoderLoader()
    stamp = (exported / MODEL_FILE).stat().st_mtime_ns
    again = cached_export(bundled.model_path(), loader.digest(bundled.model_path()), export_root)
    assert again == exported and (again / MODEL_FILE).stat().st_mtime_ns == stamp
    note = export_note(exported)
    assert note["opset"] == 17 and note["model_digest"] == loader.digest(bundled.model_path())
    assert not [p for p in exported.parent.iterdir() if p.name.startswith(".")]


@pytest.mark.slow
def test_onnx_token_vectors_equal_torch_on_the_same_tokens(exported):
    # Reference: the transformers BertModel inside the sentence-transformers model, run by
    # torch on exactly the tokens fed to onnxruntime. Tolerance 1e-4: float32 kernels sum
    # in different orders (common practice, no source).
    import torch

    from trawl.retrievers.dense import load_sentence_transformer

    st = load_sentence_transformer(str(bundled.model_path()))
    tokenizer = st.tokenizer
    texts = ["shock", "the boundary layer on a flat plate at high Mach number",
             "heat transfer " * 60]
    feed = tokenizer(texts, padding=True, truncation=True, max_length=256, return_tensors="pt")
    with torch.no_grad():
        reference = st[0].auto_model(**feed).last_hidden_state.numpy()
    session = onnx_enc._new_session(str(exported / MODEL_FILE), 1)
    ours = session.run(None, {k: v.numpy() for k, v in feed.items()})[0]
    mask = feed["attention_mask"].numpy().astype(bool)
    assert np.abs(ours[mask] - reference[mask]).max() < 1e-4
    encoder = onnx_enc.OnnxEncoder(EncoderSpec("minilm-onnx"), EncoderLoader(), exported.parent.parent)
    assert encoder._max_tokens() == st.max_seq_length
    ids = [e.ids for e in encoder.tokenizer().encode_batch(texts)]
    assert ids == [row[m].tolist() for row, m in zip(feed["input_ids"].numpy(), mask)]


@pytest.mark.slow
def test_minilm_onnx_vectors_match_torch_on_every_cranfield_item(
        cranfield, export_root, cranfield_minilm_index):
    # Reference: the torch fp32 minilm encoder (sentence-transformers' encode, checked
    # against it in tests/external/test_retrieval_reference.py), on every item of the
    # Cranfield collection (1,400 aeronautics abstracts, an open test collection).
    # Goal from the deployment-variants issue: cosine >= 0.9999 on every item.
    texts = load_catalogue(cranfield / "catalogue.jsonl").texts()
    reference = np.load(cranfield_minilm_index / "vectors.npy")
    encoder = onnx_enc.OnnxEncoder(EncoderSpec("minilm-onnx"), EncoderLoader(), export_root)
    ours = encoder.encode_documents(texts)
    cosine = (ours * reference).sum(axis=1)
    assert len(cosine) == 1400 and cosine.min() >= 0.9999, cosine.argmin()


@pytest.mark.slow
def test_int8_model_stays_close_to_fp32(cranfield, export_root, exported):
    # Sanity bounds for dynamic int8 (common practice, no source): mean cosine to the fp32
    # vectors >= 0.99 and none below 0.97; the int8 file holds about a quarter of the bytes.
    texts = load_catalogue(cranfield / "catalogue.jsonl").texts()[:100]
    loader = EncoderLoader()
    fp32 = onnx_enc.OnnxEncoder(EncoderSpec("minilm-onnx"), loader, export_root)
    int8 = onnx_enc.OnnxEncoder(EncoderSpec("minilm-onnx-int8"), loader, export_root)
    cosine = (fp32.encode_documents(texts) * int8.encode_documents(texts)).sum(axis=1)
    assert cosine.mean() >= 0.99 and cosine.min() >= 0.97
    assert (exported / INT8_FILE).stat().st_size < 0.3 * (exported / MODEL_FILE).stat().st_size
    assert int8.describe()["quantised"].startswith("model weights int8")


def test_onnx_specs_parse_round_trip_and_load_the_onnx_encoder(tmp_path):
    from trawl.retrievers.spec import parse_spec

    folder, _, _ = tiny_onnx_folder(tmp_path / "tiny")
    spec = parse_spec(f"onnx:{folder};query=query: ")
    assert (spec.kind, spec.path, spec.query_prefix) == ("onnx", str(folder), "query: ")
    assert parse_spec(str(spec)) == spec
    assert parse_spec("minilm-onnx-int8").quantised_model and not parse_spec("minilm-onnx").quantised_model
    encoder = EncoderLoader().encoder(spec)
    assert isinstance(encoder, onnx_enc.OnnxEncoder)
    # the prefix reaches the tokenizer: with it, the query's vector changes
    plain = onnx_enc.OnnxEncoder(parse_spec(f"onnx:{folder}"), EncoderLoader())
    assert not np.allclose(encoder.encode_queries(["fares"]), plain.encode_queries(["fares"]))
    with pytest.raises(UsageError, match="give a folder with model.onnx and tokenizer.json"):
        parse_spec(f"onnx:{tmp_path / 'missing'}")


def test_an_index_build_keeps_the_export_beside_its_embedding_cache(tmp_path, monkeypatch):
    # The export itself is replaced by a tiny user folder: what is checked is where the
    # encoder looks, which a build sets to its embedding cache unless a root was given.
    monkeypatch.setenv("TRAWL_CACHE_DIR", str(tmp_path / "default"))
    encoder = onnx_enc.OnnxEncoder(EncoderSpec("minilm-onnx"), EncoderLoader())
    encoder.keep_exports_in(tmp_path / "build-cache")
    assert encoder._export_root == tmp_path / "build-cache"
    given = onnx_enc.OnnxEncoder(EncoderSpec("minilm-onnx"), EncoderLoader(), tmp_path / "mine")
    given.keep_exports_in(tmp_path / "build-cache")
    assert given._export_root == tmp_path / "mine"


@pytest.mark.slow
def test_a_later_process_uses_the_export_its_index_was_built_with(tmp_path, monkeypatch):
    # Build with one cache folder, search from a "new process" (fresh loader) whose default
    # cache is elsewhere: the recorded export is used, nothing is exported again.
    from trawl.catalogue import Catalogue, Item
    from trawl.index import build_index, open_index

    monkeypatch.setenv("TRAWL_CACHE_DIR", str(tmp_path / "elsewhere"))
    cat = Catalogue("tiny.jsonl", (Item("a", "faq", "Lost card", "Block a lost card."),
                                   Item("b", "faq", "Late fees", "How late fees work.")))
    build_index(cat, "minilm-onnx", tmp_path / "idx", cache_dir=tmp_path / "cache", quiet=True,
                loader=EncoderLoader())
    index = open_index(tmp_path / "idx", cat, "minilm-onnx", loader=EncoderLoader())
    assert index.search_one("card blocked", 1)[0][0] == "a"
    assert index.manifest["encoder"]["runtime"]["export"].startswith(str(tmp_path / "cache"))
    assert not (tmp_path / "elsewhere" / "onnx").exists()
