"""The index manifest: what an index folder holds, how it was built, and reading it back.

``manifest.json`` records the encoder (its canonical spec and fingerprint), the
catalogue (fingerprint, template), the search structure and library versions; only its
``build`` section differs between two builds of the same inputs.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Mapping
from dataclasses import dataclass
from datetime import datetime, timezone
from importlib import metadata
from pathlib import Path
from typing import Any

from .. import __version__
from ..catalogue import Catalogue
from ..errors import InputError
from ..files import atomic_write
from ..retrievers.spec import EncoderSpec
from ..stores import store_settings_from

FORMAT = "trawl-index/1"
MANIFEST = "manifest.json"
IDS = "ids.txt"
VECTORS = "vectors.npy"
HNSW_FILE = "hnsw.faiss"
LEXICAL_DIR = "bm25"
ANN_KINDS = ("exact", "hnsw")


@dataclass(frozen=True)
class IndexInfo:
    """What an index holds (the manifest) plus how its last build went."""

    path: str
    spec: str
    encoder_fingerprint: str
    dim: int                        # 0 for bm25
    normalised: bool
    catalogue_path: str
    catalogue_fingerprint: str
    template: str
    items: int
    ann: str
    ann_params: Mapping[str, Any]
    versions: Mapping[str, str]
    created_at: str
    embedded: int                   # items whose text was embedded by that build
    reused: int                     # items whose vector came from the embedding cache
    seconds: float
    items_per_s: float
    bytes: int                      # size of the index folder
    store: str = "fp32"             # how vectors are kept: fp32, int8, binary+int8, binary+fp32
    vector_bytes: int = 0           # bytes of the vectors (codes) searched; 0 for bm25
    # items longer than the encoder's window (window.Truncation.as_dict), counted by a
    # build; None when not counted (bm25, static models, an index only opened)
    items_over_window: Mapping[str, int] | None = None

    def as_dict(self) -> dict[str, Any]:
        return {k: (dict(v) if isinstance(v, Mapping) else v) for k, v in self.__dict__.items()}

def read_manifest(folder: str | Path) -> dict[str, Any]:
    path = Path(folder) / MANIFEST
    if not path.is_file():
        raise InputError(folder, f"not a trawl index (no {MANIFEST}); build one with "
                         "`trawl index CATALOGUE -e ENCODER -o DIR`")
    try:
        manifest = json.loads(path.read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(path, f"index manifest is not valid JSON ({exc}); rebuild the index")
    if manifest.get("format") != FORMAT:
        raise InputError(path, f"index format {manifest.get('format')!r} is not {FORMAT!r}; "
                         "rebuild the index with this version of trawl")
    return manifest


def make_manifest(catalogue: Catalogue, spec: EncoderSpec, fingerprint: str, dim: int, ann: str,
              ann_params: dict, embedded: int, seconds: float,
              engine: str = "local", store: Mapping[str, Any] | None = None,
              runtime: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """The manifest; ``store`` is the vector store's section (stores.write_store) and
    ``runtime`` what ran an ONNX encoder (export, opset, onnxruntime version)."""
    packages = (["bm25s"] if spec.lexical else
                ["model2vec"] if spec.kind == "static" else
                ["onnxruntime"] if "onnx" in spec.kind else
                ["torch", "transformers", "sentence-transformers"])
    packages += ["numpy"] + ([] if spec.lexical else ["faiss-cpu"])
    encoder = {**spec.as_dict(), "fingerprint": fingerprint, "dim": dim,
               "normalised": not spec.lexical}
    if runtime:
        encoder["runtime"] = dict(runtime)
    return {
        "format": FORMAT,
        "encoder": encoder,
        "catalogue": {"path": str(Path(catalogue.path).resolve()),
                      "fingerprint": catalogue.fingerprint, "items": len(catalogue),
                      "template": catalogue.template.pattern},
        "search": {"ann": ann, **ann_params},
        **({"store": dict(store)} if store else {}),
        "versions": {"trawl": __version__, **{p: package_version(p) for p in packages}},
        # the only part that differs between two builds of the same inputs
        "build": {"created_at": datetime.now(timezone.utc).isoformat(timespec="seconds"),
                  "engine": engine, "embedded": embedded, "reused": len(catalogue) - embedded,
                  "seconds": round(seconds, 3),
                  "items_per_s": round(len(catalogue) / seconds, 1) if seconds > 0 else 0.0},
    }


def info_from_manifest(folder: Path, m: Mapping[str, Any]) -> IndexInfo:
    enc, cat, search, build = m["encoder"], m["catalogue"], m["search"], m["build"]
    return IndexInfo(
        path=str(folder), spec=enc["spec"], encoder_fingerprint=enc["fingerprint"],
        dim=enc["dim"], normalised=enc["normalised"], catalogue_path=cat["path"],
        catalogue_fingerprint=cat["fingerprint"], template=cat["template"], items=cat["items"],
        ann=search["ann"], ann_params={k: v for k, v in search.items() if k != "ann"},
        versions=dict(m["versions"]), created_at=build["created_at"],
        embedded=build["embedded"], reused=build["reused"], seconds=build["seconds"],
        items_per_s=build["items_per_s"], bytes=folder_bytes(folder),
        **store_summary(m))


def store_summary(m: Mapping[str, Any]) -> dict[str, Any]:
    """``store`` (how vectors are kept, "none" for bm25) and ``vector_bytes`` of a manifest."""
    if m["encoder"]["dim"] == 0:
        return {"store": "none", "vector_bytes": 0}
    store = m.get("store") or {}
    return {"store": store_settings_from(store).label, "vector_bytes": store.get(
        "vector_bytes", m["catalogue"]["items"] * m["encoder"]["dim"] * 4)}


def folder_bytes(folder: Path) -> int:
    return sum(p.stat().st_size for p in Path(folder).rglob("*") if p.is_file())


def write_json(path: Path, obj: Any) -> None:
    with atomic_write(path) as fh:
        fh.write(json.dumps(obj, indent=2, ensure_ascii=False) + "\n")


def lexical_recipe(spec: EncoderSpec) -> str:
    """What decides a lexical index's scores: the spec, the tokeniser and the libraries'
    versions. Recorded as its fingerprint at build and compared on open, so a cached
    index tokenised another way is rebuilt, never searched with other query terms."""
    from ..retrievers.lexical import TOKENISER

    recipe: list[Any] = [spec.as_dict(), TOKENISER, package_version("bm25s")]
    if spec.stem != "none":  # unstemmed recipes stay as earlier versions wrote them
        recipe[1] = {**TOKENISER, "stemmer": f"snowball {spec.stem}"}
        recipe.append(package_version("PyStemmer"))
    return hashlib.sha256(json.dumps(recipe, sort_keys=True).encode()).hexdigest()[:16]


def package_version(package: str) -> str:
    try:
        return metadata.version(package)
    except metadata.PackageNotFoundError:
        return "absent"
