"""Static encoder (``static:DIR``): a model2vec model, one vector per token, averaged.

No transformer runs at query time, so encoding costs a table look-up; the price is
quality, which ``trawl eval`` measures against the model it was distilled from.
"""

from __future__ import annotations

import hashlib
from typing import Any

import numpy as np

from ..errors import UsageError
from .loading import EncoderLoader, normalise
from .spec import EncoderSpec


def load_static_model(path: str) -> Any:
    from model2vec import StaticModel

    try:
        return StaticModel.from_pretrained(path)
    except (OSError, ValueError) as exc:
        raise UsageError(f"cannot load a model2vec static model from {path}: "
                         f"{str(exc).splitlines()[0]}; make one with `trawl distill -o DIR`"
                         ) from None


class StaticEncoder:
    """A model2vec folder; vectors are L2-normalised like the dense ones."""

    def __init__(self, spec: EncoderSpec, loader: EncoderLoader) -> None:
        self.spec = spec
        self._loader = loader

    @property
    def fingerprint(self) -> str:
        h = hashlib.sha256("\0".join(["model2vec", self._loader.digest(self.spec.path),
                                      "normalised"]).encode())
        return h.hexdigest()[:16]

    def _model(self) -> Any:
        return self._loader.model("static", self.spec.path,
                                  lambda: load_static_model(self.spec.path))

    def encode_documents(self, texts: list[str], batch_size: int = 1024) -> np.ndarray:
        return self._encode(texts, batch_size)

    def encode_queries(self, texts: list[str], batch_size: int = 1024) -> np.ndarray:
        return self._encode(texts, batch_size)

    def _encode(self, texts: list[str], batch_size: int) -> np.ndarray:
        # multiprocessing would make results depend on worker scheduling; one process is
        # fast enough for a table look-up
        vectors = self._model().encode(texts, batch_size=max(batch_size, 1024),
                                       show_progress_bar=False, use_multiprocessing=False)
        return normalise(vectors)
