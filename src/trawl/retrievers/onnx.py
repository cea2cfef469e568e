"""ONNX Runtime encoders: ``minilm-onnx``, ``minilm-onnx-int8`` and ``onnx:DIR``.

What teams often deploy on CPUs: the same weights as ``minilm``, run by onnxruntime
instead of torch (no torch import at query time, less per-call overhead), optionally
with onnxruntime's dynamic int8 quantisation. The bundled model is exported once into
the cache (``onnx_export``); ``onnx:DIR`` runs a folder with ``model.onnx`` and the
model's ``tokenizer.json``. Tokens come from the model's own tokenizer with the same
truncation length as the sentence-transformers model; token vectors are pooled as the
folder's ``1_Pooling/config.json`` says (mean when absent) and L2-normalised.

Sessions are built per compute-thread count (``set_threads``), since onnxruntime fixes
its thread pool when a session is created.
"""

from __future__ import annotations

import hashlib
import json
from importlib import metadata
from pathlib import Path
from typing import Any

import numpy as np

from .. import bundled
from ..embedcache import default_cache_dir
from ..errors import UsageError
from .loading import EncoderLoader, normalise
from .onnx_export import (INPUT_NAMES, MODEL_FILE, OPSET, POOLING_CONFIG, cached_export,
                          export_note, quantised_copy)
from .spec import EncoderSpec

ONNX_KINDS = ("minilm-onnx", "minilm-onnx-int8", "onnx")
FALLBACK_MAX_TOKENS = 512  # BERT's position table, when a folder states no limit
POOLINGS = {"pooling_mode_mean_tokens": "mean", "pooling_mode_cls_token": "cls"}

_threads: int | None = None


def set_threads(threads: int | None) -> int | None:
    """Compute threads for ONNX sessions from now on (None: onnxruntime's default, one
    per physical core); returns the previous setting."""
    global _threads
    before, _threads = _threads, threads
    return before


def get_threads() -> int | None:
    return _threads


def onnxruntime_version() -> str:
    try:
        return metadata.version("onnxruntime")
    except metadata.PackageNotFoundError:
        return "absent"


class OnnxEncoder:
    """An ONNX model run by onnxruntime on CPU, with optional query/document prefixes."""

    def __init__(self, spec: EncoderSpec, loader: EncoderLoader,
                 export_root: str | Path | None = None) -> None:
        if spec.kind not in ONNX_KINDS:
            raise UsageError(f"encoder {spec} is not an ONNX encoder ({', '.join(ONNX_KINDS)})")
        self.spec = spec
        self._loader = loader
        self._bundled = spec.kind.startswith("minilm")
        self._source = str(bundled.model_path()) if self._bundled else spec.path
        self._export_root = Path(export_root) if export_root else None
        self._folder: Path | None = None
        self._tokenizer = None
        self._pooling_mode: str | None = None   # read once: every query is pooled

    @property
    def int8(self) -> bool:
        return self.spec.kind == "minilm-onnx-int8"

    @property
    def fingerprint(self) -> str:
        variant = f"int8/onnxruntime-{onnxruntime_version()}" if self.int8 else "fp32"
        h = hashlib.sha256("\0".join([
            "onnx", self._loader.digest(self._source), variant,
            f"opset={OPSET}" if self._bundled else "user-export",
            f"document_prefix={self.spec.document_prefix}", "normalised"]).encode())
        return h.hexdigest()[:16]

    def describe(self) -> dict[str, Any]:
        """For the index manifest: which export, opset and runtime made the vectors."""
        folder = self.folder()
        note = export_note(folder)
        return {"runtime": "onnxruntime", "onnxruntime": onnxruntime_version(),
                "export": str(folder),
                "model_digest": self._loader.digest(self._source)[:16],
                "opset": note.get("opset", _model_opset(folder / MODEL_FILE)),
                "exporter": note.get("exporter", "user export"),
                "quantised": "model weights int8 (onnxruntime dynamic)" if self.int8 else "none",
                "max_tokens": self._max_tokens(), "pooling": self._pooling()}

    def keep_exports_in(self, cache_root: str | Path) -> None:
        """Export into ``cache_root`` (the embedding cache in use) unless a root was given
        or the export was already found."""
        if self._export_root is None and self._folder is None:
            self._export_root = Path(cache_root)

    def use_export(self, folder: str | Path) -> None:
        """Use the export an index was built with when it is still there and current
        (a later process need not know which cache folder the build used)."""
        folder = Path(folder)
        if self._bundled and self._folder is None and \
                export_note(folder).get("model_digest") == self._loader.digest(self._source):
            self._folder = folder

    def folder(self) -> Path:
        """The folder holding model.onnx and tokenizer files (exporting the bundled model
        into the cache on first use)."""
        if self._folder is None:
            if self._bundled:
                root = self._export_root or default_cache_dir()
                self._folder = cached_export(self._source, self._loader.digest(self._source),
                                             root)
            else:
                self._folder = Path(self.spec.path)
                _check_user_folder(self._folder)
        return self._folder

    def model_file(self) -> Path:
        folder = self.folder()
        return quantised_copy(folder) if self.int8 else folder / MODEL_FILE

    def _session(self):
        threads = _threads
        path = str(self.model_file())
        return self._loader.model(f"onnx-session/{threads or 0}", path,
                                  lambda: _new_session(path, threads))

    def encode_documents(self, texts: list[str], batch_size: int = 32) -> np.ndarray:
        return self._encode([self.spec.document_prefix + t for t in texts], batch_size)

    def encode_queries(self, texts: list[str], batch_size: int = 32) -> np.ndarray:
        return self._encode([self.spec.query_prefix + t for t in texts], batch_size)

    def _encode(self, texts: list[str], batch_size: int) -> np.ndarray:
        if batch_size < 1:
            raise UsageError(f"batch size {batch_size} must be >= 1")
        session = self._session()
        wanted = [i.name for i in session.get_inputs()]
        tokens = self.tokenizer().encode_batch([t.strip() for t in texts])
        order = sorted(range(len(texts)), key=lambda i: -len(tokens[i].ids))
        out: np.ndarray | None = None
        for s in range(0, len(order), batch_size):
            rows = order[s:s + batch_size]
            feed = _padded([tokens[i] for i in rows])
            hidden = session.run(None, {name: feed[name] for name in wanted})[0]
            pooled = self._pool(hidden, feed["attention_mask"])
            if out is None:
                out = np.empty((len(texts), pooled.shape[1]), dtype=np.float32)
            out[rows] = pooled
        if out is None:
            return np.empty((0, 0), dtype=np.float32)
        return normalise(out)

    def _pool(self, hidden: np.ndarray, mask: np.ndarray) -> np.ndarray:
        if hidden.ndim == 2:        # the model pools itself
            return hidden
        if self._pooling() == "cls":
            return hidden[:, 0]
        weights = mask[:, :, None].astype(np.float32)
        summed = (hidden * weights).sum(axis=1)
        return summed / np.clip(weights.sum(axis=1), 1e-9, None)

    def tokenizer(self):
        """The model's own fast tokenizer, truncating at the model's length, no padding."""
        if self._tokenizer is None:
            from tokenizers import Tokenizer

            tok = Tokenizer.from_file(str(self.folder() / "tokenizer.json"))
            tok.enable_truncation(self._max_tokens())
            tok.no_padding()
            self._tokenizer = tok
        return self._tokenizer

    def _max_tokens(self) -> int:
        folder = self.folder()
        st = _read_json(folder / "sentence_bert_config.json")
        if isinstance(st.get("max_seq_length"), int):
            return st["max_seq_length"]
        limits = [_read_json(folder / "tokenizer_config.json").get("model_max_length"),
                  _read_json(folder / "config.json").get("max_position_embeddings")]
        limits = [n for n in limits if isinstance(n, int) and 0 < n <= 100_000]
        return min(limits) if limits else FALLBACK_MAX_TOKENS

    def _pooling(self) -> str:
        if self._pooling_mode is None:
            self._pooling_mode = self._read_pooling()
        return self._pooling_mode

    def _read_pooling(self) -> str:
        config = _read_json(self.folder() / POOLING_CONFIG)
        chosen = [name for key, name in POOLINGS.items() if config.get(key)]
        others = [k for k, v in config.items() if k.startswith("pooling_mode") and v
                  and k not in POOLINGS]
        if others or len(chosen) > 1:
            raise UsageError(f"{self.folder() / POOLING_CONFIG}: pooling {others or chosen} is "
                             "not supported; allowed: one of mean or cls tokens")
        return chosen[0] if chosen else "mean"


def _padded(encodings) -> dict[str, np.ndarray]:
    """Right-padded int64 arrays for a batch of ``tokenizers`` encodings (pad id 0)."""
    width = max(len(e.ids) for e in encodings)
    feed = {name: np.zeros((len(encodings), width), dtype=np.int64) for name in INPUT_NAMES}
    for r, e in enumerate(encodings):
        n = len(e.ids)
        feed["input_ids"][r, :n] = e.ids
        feed["attention_mask"][r, :n] = e.attention_mask
        feed["token_type_ids"][r, :n] = e.type_ids
    return feed


def _new_session(path: str, threads: int | None):
    import onnxruntime as ort

    options = ort.SessionOptions()
    options.intra_op_num_threads = threads or 0
    options.inter_op_num_threads = 1
    options.execution_mode = ort.ExecutionMode.ORT_SEQUENTIAL
    options.graph_optimization_level = ort.GraphOptimizationLevel.ORT_ENABLE_ALL
    options.log_severity_level = 3  # errors only: optimiser notes are noise here
    try:
        session = ort.InferenceSession(path, options, providers=["CPUExecutionProvider"])
    except Exception as exc:  # onnxruntime raises its own exception types
        raise UsageError(f"onnxruntime cannot load {path}: {str(exc).splitlines()[0]}") from None
    unknown = [i.name for i in session.get_inputs() if i.name not in INPUT_NAMES]
    if unknown:
        raise UsageError(f"{path}: inputs {unknown} are not supported; allowed: "
                         f"{', '.join(INPUT_NAMES)}")
    return session


def _check_user_folder(folder: Path) -> None:
    for name in (MODEL_FILE, "tokenizer.json"):
        if not (folder / name).is_file():
            raise UsageError(f"ONNX model folder {folder} has no {name}; it needs {MODEL_FILE} "
                             "(token ids in, token or sentence vectors out) and the model's "
                             "tokenizer.json")


def _model_opset(path: Path) -> int | None:
    try:
        import onnx

        model = onnx.load(str(path), load_external_data=False)
    except Exception:  # a model onnx cannot parse is reported by onnxruntime instead
        return None
    return next((o.version for o in model.opset_import if o.domain in ("", "ai.onnx")), None)


def _read_json(path: Path) -> dict[str, Any]:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return {}
    return data if isinstance(data, dict) else {}
