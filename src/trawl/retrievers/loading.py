"""Encoder loading: the ``Encoder`` protocol and the loader that turns a parsed spec into
one, loading each model once per process and hashing model folders for fingerprints.
"""

from __future__ import annotations

import hashlib
from functools import lru_cache
from pathlib import Path
from typing import TYPE_CHECKING, Any, Protocol

import numpy as np

from ..errors import UsageError
from .spec import EncoderSpec, parse_spec

if TYPE_CHECKING:
    from sentence_transformers import SentenceTransformer

class Encoder(Protocol):
    """Text to L2-normalised float32 vectors, documents and queries separately."""

    spec: EncoderSpec

    @property
    def fingerprint(self) -> str:
        """Hash of everything that changes document vectors (weights, variant, prefix)."""

    def encode_documents(self, texts: list[str], batch_size: int) -> np.ndarray: ...

    def encode_queries(self, texts: list[str], batch_size: int) -> np.ndarray: ...


def normalise(vectors: np.ndarray) -> np.ndarray:
    """Rows scaled to unit length (all-zero rows stay zero), as contiguous float32."""
    v = np.asarray(vectors, dtype=np.float32)
    norms = np.linalg.norm(v, axis=1, keepdims=True)
    return np.ascontiguousarray(v / np.where(norms == 0, 1, norms), dtype=np.float32)


SKIPPED_MODEL_PARTS = {"README.md", ".gitattributes", ".git", "onnx", "openvino"}


def folder_digest(path: str | Path) -> str:
    """SHA-256 over the files of a model folder (names and bytes; docs and exports skipped)."""
    root = Path(path)
    h = hashlib.sha256()
    for file in sorted(p for p in root.rglob("*") if p.is_file()):
        rel = file.relative_to(root)
        if SKIPPED_MODEL_PARTS.intersection(rel.parts):
            continue
        h.update(str(rel.as_posix()).encode() + b"\0")
        with file.open("rb") as fh:
            h.update(hashlib.file_digest(fh, "sha256").digest())
    return h.hexdigest()


class EncoderLoader:
    """Loads each model at most once and remembers weight digests.

    Pass one loader around to share models between builds and searches; functions that
    take ``loader=None`` use the per-process ``default_loader()``.
    """

    def __init__(self) -> None:
        self._models: dict[tuple[str, str], Any] = {}
        self._digests: dict[tuple[str, tuple[tuple[str, int, int], ...]], str] = {}
        self._encoders: dict[EncoderSpec, Encoder] = {}

    def encoder(self, spec: EncoderSpec | str) -> Encoder:
        """The encoder for a dense spec; models load lazily on first encode."""
        if isinstance(spec, str):
            spec = parse_spec(spec)
        if spec.lexical:
            raise UsageError("bm25 is a lexical retriever, not an embedding encoder")
        if spec not in self._encoders:
            if spec.kind == "static":
                from .static import StaticEncoder

                self._encoders[spec] = StaticEncoder(spec, self)
            elif "onnx" in spec.kind:
                from .onnx import OnnxEncoder

                self._encoders[spec] = OnnxEncoder(spec, self)
            else:
                from .dense import TransformerEncoder

                self._encoders[spec] = TransformerEncoder(spec, self)
        return self._encoders[spec]

    def digest(self, path: str | Path) -> str:
        """Weights digest of a model folder, recomputed only when a file's size or mtime changes."""
        root = Path(path)
        if not root.is_dir():
            raise UsageError(f"model folder {root} not found")
        stamp = tuple(sorted((str(p), p.stat().st_size, p.stat().st_mtime_ns)
                             for p in root.rglob("*") if p.is_file()))
        key = (str(root), stamp)
        if key not in self._digests:
            self._digests[key] = folder_digest(root)
        return self._digests[key]

    def model(self, kind: str, path: str, make) -> Any:
        """The model ``make()`` builds for (kind, path), built once per loader."""
        key = (kind, path)
        if key not in self._models:
            self._models[key] = make()
        return self._models[key]

    def sentence_transformer(self, path: str) -> SentenceTransformer:
        from .dense import load_sentence_transformer

        return self.model("st", path, lambda: load_sentence_transformer(path))


@lru_cache(maxsize=1)
def default_loader() -> EncoderLoader:
    """The per-process loader: models stay loaded for the life of the process."""
    return EncoderLoader()
