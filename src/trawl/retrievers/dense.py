"""Dense encoders over sentence-transformers: ``minilm``, ``minilm-int8`` and ``st:DIR``.

Vectors are L2-normalised so inner product is cosine similarity. The int8 variant
quantises every ``nn.Linear`` dynamically (weights int8, activations quantised per
batch at run time), which is what people try first to make a small encoder faster on CPU.
"""

from __future__ import annotations

import copy
import hashlib
import warnings
from typing import TYPE_CHECKING, Any

import numpy as np

from .. import bundled
from ..errors import UsageError
from .loading import EncoderLoader, normalise
from .spec import EncoderSpec

if TYPE_CHECKING:
    from sentence_transformers import SentenceTransformer


def load_sentence_transformer(path: str) -> SentenceTransformer:
    """Load a local sentence-transformers folder on CPU, offline, without chatter."""
    import transformers
    from sentence_transformers import SentenceTransformer

    transformers.logging.set_verbosity_error()   # weight-load reports are noise here
    transformers.logging.disable_progress_bar()
    try:
        model = SentenceTransformer(path, device="cpu", local_files_only=True)
    except (OSError, ValueError) as exc:
        raise UsageError(f"cannot load a sentence-transformers model from {path}: "
                         f"{str(exc).splitlines()[0]}") from None
    model.eval()
    return model


def quantise_int8(model: Any) -> Any:
    """A copy of ``model`` with Linear layers dynamically quantised to int8 (torch)."""
    import torch

    with warnings.catch_warnings():
        # torch marks eager-mode quantisation deprecated in favour of a separate package;
        # it is still the stock CPU path in this torch build.
        warnings.simplefilter("ignore")
        return torch.ao.quantization.quantize_dynamic(copy.deepcopy(model), {torch.nn.Linear},
                                                      dtype=torch.qint8)


class TransformerEncoder:
    """A sentence-transformers model (fp32 or int8) with optional query/document prefixes."""

    def __init__(self, spec: EncoderSpec, loader: EncoderLoader) -> None:
        self.spec = spec
        self._loader = loader
        self._path = str(bundled.model_path()) if spec.kind.startswith("minilm") else spec.path

    @property
    def fingerprint(self) -> str:
        variant = "int8" if self.spec.kind == "minilm-int8" else "fp32"
        if variant == "int8":
            import torch  # quantised kernels may change between torch releases

            variant += f"/torch-{torch.__version__}"
        h = hashlib.sha256("\0".join([
            "sentence-transformers", self._loader.digest(self._path), variant,
            f"document_prefix={self.spec.document_prefix}", "normalised"]).encode())
        return h.hexdigest()[:16]

    def _model(self) -> Any:
        base = self._loader.sentence_transformer(self._path)
        if self.spec.kind != "minilm-int8":
            return base
        return self._loader.model("int8", self._path, lambda: quantise_int8(base))

    def encode_documents(self, texts: list[str], batch_size: int = 32) -> np.ndarray:
        return self._encode([self.spec.document_prefix + t for t in texts], batch_size)

    def encode_queries(self, texts: list[str], batch_size: int = 32) -> np.ndarray:
        return self._encode([self.spec.query_prefix + t for t in texts], batch_size)

    def _encode(self, texts: list[str], batch_size: int) -> np.ndarray:
        vectors = self._model().encode(texts, batch_size=batch_size, convert_to_numpy=True,
                                       normalize_embeddings=True, show_progress_bar=False)
        return normalise(vectors)
