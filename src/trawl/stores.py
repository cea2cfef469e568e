"""Vector stores: how an index keeps document vectors, independent of the encoder.

- ``fp32``: the vectors as the encoder made them (4 bytes a dimension), searched by exact
  inner product.
- ``int8``: faiss's scalar quantiser, 8 bits a dimension with each dimension's own
  min/max range (``QT_8bit``): a quarter of the bytes, searched exhaustively by inner
  product between the float query and the decoded vectors (an HNSW index walks a graph
  over the same codes instead; ``index.build``).
- ``binary``: one sign bit a dimension (1/32 of the bytes), searched by Hamming distance
  for ``rescore_factor`` x depth candidates, which are then re-scored by inner product
  with int8 (default) or fp32 vectors. Only the bit codes are scanned; the re-scoring
  vectors are memory-mapped, so a query reads just its candidates' rows.

A quantised store changes the vectors, not the model: ``minilm-int8`` quantises the
model's weights and keeps fp32 vectors, ``--store int8`` keeps the model and quantises
the vectors; the two combine.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any, Protocol

import numpy as np

from .errors import UsageError
from .files import atomic_write

STORE_KINDS = ("fp32", "int8", "binary")
RESCORE_KINDS = ("int8", "fp32")
# Hamming candidates re-scored per result wanted (4 is common practice, no source). On
# Cranfield with minilm and int8 re-scoring, nDCG@10 moves by -0.003 when 10 results are
# asked for (40 candidates) and by +0.0003 at 100 (bench/bench_variants.py).
RESCORE_FACTOR = 4
FP32_FILE = "vectors.npy"
INT8_FILE = "vectors-int8.faiss"
BINARY_FILE = "vectors-binary.npy"
RESCORE_CODES = "rescore-int8.npy"      # int8 codes of the binary store's re-scoring vectors
RESCORE_PARAMS = "rescore-int8.faiss"   # the quantiser's trained ranges (an empty faiss index)


@dataclass(frozen=True)
class StoreSettings:
    """Which store to write; ``rescore`` and ``rescore_factor`` apply to ``binary`` only."""

    kind: str = "fp32"
    rescore: str = "int8"
    rescore_factor: int = RESCORE_FACTOR

    def __post_init__(self) -> None:
        if self.kind not in STORE_KINDS:
            raise UsageError(f"vector store {self.kind!r} is not one of: {', '.join(STORE_KINDS)}")
        if self.rescore not in RESCORE_KINDS:
            raise UsageError(f"re-scoring vectors {self.rescore!r} are not one of: "
                             f"{', '.join(RESCORE_KINDS)}")
        if self.rescore_factor < 1:
            raise UsageError(f"re-scoring factor {self.rescore_factor} must be >= 1")

    @property
    def label(self) -> str:
        """Short name for tables: what is kept, and for binary what re-scores it."""
        return f"binary+{self.rescore}" if self.kind == "binary" else self.kind


class VectorStore(Protocol):
    """Searches document vectors with float query vectors."""

    kind: str
    exhaustive: bool   # every document scored (ties at a cut-off can be resolved exactly)

    def __len__(self) -> int: ...

    def search(self, queries: np.ndarray, depth: int) -> tuple[np.ndarray, np.ndarray]:
        """Scores and positions, best first, ``depth`` per query (-1 pads missing ones)."""


def write_store(vectors: np.ndarray, settings: StoreSettings, folder: Path) -> dict[str, Any]:
    """Write the store's files into ``folder``; returns the manifest section (with bytes).
    fp32 vectors a build already wrote into place (``index.rowfile``) are not written again."""
    in_place = written_in_place(vectors, folder / FP32_FILE)
    vectors = np.ascontiguousarray(vectors, dtype=np.float32)
    if settings.kind == "fp32":
        if not in_place:
            _save_npy(folder / FP32_FILE, vectors)
        return store_section(settings.kind, vectors.shape, folder, [FP32_FILE], vectors.nbytes)
    if settings.kind == "int8":
        index = _int8_index(vectors)
        index.add(vectors)
        _write_faiss(index, folder / INT8_FILE)
        return store_section(settings.kind, vectors.shape, folder, [INT8_FILE],
                             len(vectors) * index.sa_code_size())
    return _write_binary(vectors, settings, folder)


def store_section(kind: str, shape: tuple[int, ...], folder: Path, files: list[str],
                  vector_bytes: int, **extra: Any) -> dict[str, Any]:
    """The manifest's store section, one shape for exhaustive stores and HNSW graphs, so
    every index's size is counted from the files it searches."""
    n, dim = shape
    return {"kind": kind, "items": n, "dim": dim, **extra, "files": files,
            "vector_bytes": vector_bytes,
            "bytes": sum((folder / f).stat().st_size for f in files)}


def _write_binary(vectors: np.ndarray, settings: StoreSettings, folder: Path) -> dict[str, Any]:
    codes = sign_codes(vectors)
    _save_npy(folder / BINARY_FILE, codes)
    extra: dict[str, Any] = {"rescore": settings.rescore,
                             "rescore_factor": settings.rescore_factor}
    if settings.rescore == "fp32":
        _save_npy(folder / FP32_FILE, vectors)
        files, extra["rescore_bytes"] = [BINARY_FILE, FP32_FILE], vectors.nbytes
    else:
        params = _int8_index(vectors)   # trained ranges only; the codes go to a memory-mapped file
        rescore = params.sa_encode(vectors)
        _write_faiss(params, folder / RESCORE_PARAMS)
        _save_npy(folder / RESCORE_CODES, rescore)
        files = [BINARY_FILE, RESCORE_CODES, RESCORE_PARAMS]
        extra["rescore_bytes"] = rescore.nbytes
    return store_section(settings.kind, vectors.shape, folder, files, codes.nbytes, **extra)


def sign_codes(vectors: np.ndarray) -> np.ndarray:
    """One bit per dimension, set where the component is positive, packed 8 to a byte."""
    return np.packbits(np.asarray(vectors) > 0, axis=1)


def load_store(folder: Path, section: dict[str, Any] | None) -> VectorStore:
    """Open the store a manifest section describes (None: an index from before stores,
    which holds fp32 vectors)."""
    kind = (section or {}).get("kind", "fp32")
    if kind == "fp32":
        return FlatStore(np.load(folder / FP32_FILE, allow_pickle=False))
    if kind == "int8":
        return Int8Store(_read_faiss(folder / INT8_FILE))
    if kind == "binary":
        return BinaryStore(folder, section or {})
    raise UsageError(f"index {folder} uses vector store {kind!r}, which this version of trawl "
                     f"does not know (known: {', '.join(STORE_KINDS)}); rebuild the index")


class FlatStore:
    """fp32 vectors, exact inner product."""

    kind = "fp32"
    exhaustive = True

    def __init__(self, vectors: np.ndarray) -> None:
        import faiss

        self._index = faiss.IndexFlatIP(vectors.shape[1])
        self._index.add(np.ascontiguousarray(vectors, dtype=np.float32))

    def __len__(self) -> int:
        return self._index.ntotal

    def search(self, queries: np.ndarray, depth: int) -> tuple[np.ndarray, np.ndarray]:
        return self._index.search(_floats(queries), depth)


class Int8Store:
    """faiss scalar-quantised vectors, inner product with the decoded vectors."""

    kind = "int8"
    exhaustive = True

    def __init__(self, index) -> None:
        self._index = index

    def __len__(self) -> int:
        return self._index.ntotal

    def search(self, queries: np.ndarray, depth: int) -> tuple[np.ndarray, np.ndarray]:
        return self._index.search(_floats(queries), depth)


class BinaryStore:
    """Sign bits scanned by Hamming distance, candidates re-scored by inner product."""

    kind = "binary"
    exhaustive = False

    def __init__(self, folder: Path, section: dict[str, Any]) -> None:
        import faiss

        codes = np.load(folder / BINARY_FILE, allow_pickle=False)
        self._bits = faiss.IndexBinaryFlat(codes.shape[1] * 8)
        self._bits.add(codes)
        self.rescore = section.get("rescore", "int8")
        self.factor = int(section.get("rescore_factor", RESCORE_FACTOR))
        if self.rescore == "fp32":
            self._vectors = np.load(folder / FP32_FILE, mmap_mode="r", allow_pickle=False)
            self._decode = None
        else:
            self._vectors = np.load(folder / RESCORE_CODES, mmap_mode="r", allow_pickle=False)
            self._decode = _read_faiss(folder / RESCORE_PARAMS).sa_decode

    def __len__(self) -> int:
        return self._bits.ntotal

    def search(self, queries: np.ndarray, depth: int) -> tuple[np.ndarray, np.ndarray]:
        queries = _floats(queries)
        n = len(self)
        wanted = min(n, depth * self.factor)
        _, candidates = self._bits.search(sign_codes(queries), wanted)
        scores = np.full((len(queries), depth), -np.inf, dtype=np.float32)
        found = np.full((len(queries), depth), -1, dtype=np.int64)
        for q, row in enumerate(candidates):
            row = np.sort(row[row >= 0])   # sorted rows read the memory map in file order
            rows = np.asarray(self._vectors[row])
            vectors = self._decode(rows) if self._decode is not None else rows
            sims = vectors @ queries[q]
            best = np.argsort(-sims, kind="stable")[:depth]
            scores[q, :len(best)] = sims[best]
            found[q, :len(best)] = row[best]
        return scores, found


def store_settings_from(section: dict[str, Any] | None) -> StoreSettings:
    """The settings an index's store was written with (fp32 for indexes from before stores)."""
    if not section:
        return StoreSettings()
    return StoreSettings(section.get("kind", "fp32"), section.get("rescore", "int8"),
                         int(section.get("rescore_factor", RESCORE_FACTOR)))


def _int8_index(vectors: np.ndarray):
    import faiss

    index = faiss.IndexScalarQuantizer(vectors.shape[1], faiss.ScalarQuantizer.QT_8bit,
                                       faiss.METRIC_INNER_PRODUCT)
    index.train(vectors)   # per-dimension min and max of these vectors
    return index


def _floats(queries: np.ndarray) -> np.ndarray:
    return np.ascontiguousarray(queries, dtype=np.float32)


def written_in_place(vectors: np.ndarray, path: Path) -> bool:
    """Whether ``vectors`` is the mapping of the file at ``path`` (nothing to write)."""
    filename = getattr(vectors, "filename", None)
    return filename is not None and Path(filename).resolve() == Path(path).resolve()


def _save_npy(path: Path, array: np.ndarray) -> None:
    with atomic_write(path, "wb") as fh:
        np.save(fh, array, allow_pickle=False)


def _write_faiss(index, path: Path) -> None:
    import faiss

    with atomic_write(path, "wb") as fh:
        fh.write(faiss.serialize_index(index).tobytes())


def _read_faiss(path: Path):
    import faiss

    return faiss.read_index(str(path))
