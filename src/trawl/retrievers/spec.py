"""Encoder specs: the short strings that name a retriever, parsed once into ``EncoderSpec``.

No model library is imported here, so parsing a spec is cheap. The forms:

- ``minilm``        the bundled all-MiniLM-L6-v2 (dense, L2-normalised)
- ``minilm-int8``   the same model with its Linear layers dynamically quantised to int8
- ``minilm-onnx``   the same model exported to ONNX, run by onnxruntime (same vectors)
- ``minilm-onnx-int8``  the ONNX export with onnxruntime's dynamic int8 quantisation
- ``onnx:DIR``      a folder with ``model.onnx`` and the model's ``tokenizer.json``; optional
                    ``;query=PREFIX`` and ``;document=PREFIX`` as for ``st:``
- ``st:DIR``        any local sentence-transformers folder; optional ``;query=PREFIX`` and
                    ``;document=PREFIX`` for models trained with prefixes
- ``static:DIR``    a model2vec static model (e.g. from ``trawl distill``)
- ``bm25``          lexical baseline (bm25s, English stop words); ``;k1=X;b=Y`` to tune,
                    ``;stem=english`` to stem words as search engines' English analysers do

Options follow the spec after semicolons because paths may hold colons and commas,
and a spec has to travel as one string (``trawl eval -e A -e B``).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import UsageError

SPEC_FORMS = ("minilm", "minilm-int8", "minilm-onnx", "minilm-onnx-int8", "static:DIR",
              "st:DIR[;query=PREFIX][;document=PREFIX]",
              "onnx:DIR[;query=PREFIX][;document=PREFIX]", "bm25[;k1=X][;b=Y][;stem=english]")
BUNDLED_KINDS = ("minilm", "minilm-int8", "minilm-onnx", "minilm-onnx-int8")
QUANTISED_MODEL_KINDS = ("minilm-int8", "minilm-onnx-int8")
FOLDER_KINDS = ("st", "static", "onnx")
BM25_K1 = 1.5   # bm25s' defaults (its "lucene" variant), the reference configuration
BM25_B = 0.75
STEMMERS = ("none", "english")  # Snowball's English stemmer (PyStemmer), or none


@dataclass(frozen=True)
class EncoderSpec:
    """A parsed ``-e`` value; equal specs produce identical vectors (given equal weights)."""

    kind: str                      # one of BUNDLED_KINDS or FOLDER_KINDS, or bm25
    path: str = ""                 # model folder for st/static/onnx (absolute)
    query_prefix: str = ""
    document_prefix: str = ""
    k1: float = BM25_K1
    b: float = BM25_B
    stem: str = "none"

    @property
    def lexical(self) -> bool:
        return self.kind == "bm25"

    @property
    def quantised_model(self) -> bool:
        """The model's weights run as int8 (its vectors are still stored as computed)."""
        return self.kind in QUANTISED_MODEL_KINDS

    def __str__(self) -> str:
        """Canonical spec string (defaults omitted), round-trips through ``parse_spec``."""
        if self.kind in FOLDER_KINDS:
            out = f"{self.kind}:{self.path}"
        else:
            out = self.kind
        opts = []
        if self.query_prefix:
            opts.append(f"query={self.query_prefix}")
        if self.document_prefix:
            opts.append(f"document={self.document_prefix}")
        if self.lexical and self.k1 != BM25_K1:
            opts.append(f"k1={self.k1:g}")
        if self.lexical and self.b != BM25_B:
            opts.append(f"b={self.b:g}")
        if self.lexical and self.stem != "none":
            opts.append(f"stem={self.stem}")
        return ";".join([out] + opts)

    def as_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"spec": str(self), "kind": self.kind}
        if self.path:
            out["path"] = self.path
        if self.kind in ("st", "onnx"):
            out.update(query_prefix=self.query_prefix, document_prefix=self.document_prefix)
        if self.lexical:
            out.update(k1=self.k1, b=self.b)
            if self.stem != "none":  # absent when off, as before the option existed
                out["stem"] = self.stem
        return out


def _bad(spec: str, why: str) -> UsageError:
    return UsageError(f"encoder {spec!r}: {why}; allowed forms: {', '.join(SPEC_FORMS)}")


def parse_spec(spec: str, *, check_paths: bool = True) -> EncoderSpec:
    """Parse an encoder spec; unknown forms raise ``UsageError`` listing the allowed ones.

    ``check_paths=False`` skips the existence check of model folders (used when reading
    a manifest whose model may have moved: the caller reports that more precisely).
    """
    if not isinstance(spec, str) or not spec.strip():
        raise _bad(str(spec), "empty encoder")
    head, *opts = spec.lstrip().split(";")
    kind, _, arg = head.strip().partition(":")
    kind = kind.strip().lower()
    options: dict[str, str] = {}
    for opt in opts:
        key, eq, value = opt.partition("=")
        key = key.strip().lower()
        if not eq or not key:
            raise _bad(spec, f"option {opt!r} is not KEY=VALUE")
        if key in options:
            raise _bad(spec, f"option {key!r} given twice")
        options[key] = value.strip() if key in ("k1", "b", "stem") else value
    if kind in BUNDLED_KINDS:
        if arg:
            raise _bad(spec, f"{kind} takes no folder")
        _allow(spec, options, ())
        return EncoderSpec(kind)
    if kind in FOLDER_KINDS:
        if not arg.strip():
            raise _bad(spec, f"{kind}: needs a model folder, e.g. {kind}:models/my-model")
        path = Path(arg.strip()).expanduser().resolve()
        if check_paths and not path.is_dir():
            raise _no_folder(spec, kind, arg.strip())
        if kind == "static":
            _allow(spec, options, ())
            return EncoderSpec(kind, str(path))
        _allow(spec, options, ("query", "document"))
        return EncoderSpec(kind, str(path), options.get("query", ""), options.get("document", ""))
    if kind == "bm25":
        if arg:
            raise _bad(spec, "bm25 takes no folder")
        _allow(spec, options, ("k1", "b", "stem"))
        k1 = _number(spec, options, "k1", BM25_K1)
        b = _number(spec, options, "b", BM25_B)
        stem = options.get("stem", "none").lower()
        if k1 < 0:
            raise _bad(spec, f"k1={k1:g} must be >= 0")
        if not 0 <= b <= 1:
            raise _bad(spec, f"b={b:g} must be between 0 and 1")
        if stem not in STEMMERS:
            raise _bad(spec, f"stem={stem!r} is not one of {', '.join(STEMMERS)}")
        return EncoderSpec(kind, k1=k1, b=b, stem=stem)
    raise _bad(spec, f"unknown encoder {kind!r}")


def as_spec(spec: EncoderSpec | str, *, check_paths: bool = True) -> EncoderSpec:
    """``spec`` itself when already parsed, else ``parse_spec(spec)``.

    Entry points accept either, so a spec parsed once by the caller travels as a value
    down to the encoder and the embedding cache instead of being parsed again.
    """
    if not isinstance(spec, EncoderSpec):
        return parse_spec(spec, check_paths=check_paths)
    if check_paths and spec.path and not Path(spec.path).is_dir():
        raise _no_folder(str(spec), spec.kind, spec.path)
    return spec


def _no_folder(spec: str, kind: str, folder: str) -> UsageError:
    return UsageError(f"encoder {spec!r}: model folder {folder} not found; "
                      + ("create one with `trawl distill -o DIR`" if kind == "static"
                         else "give a folder with model.onnx and tokenizer.json" if kind == "onnx"
                         else "give a local sentence-transformers folder"))


def _allow(spec: str, options: dict[str, str], allowed: tuple[str, ...]) -> None:
    for key in options:
        if key not in allowed:
            what = ", ".join(allowed) if allowed else "none"
            raise _bad(spec, f"unknown option {key!r} (options for this encoder: {what})")


def _number(spec: str, options: dict[str, str], key: str, default: float) -> float:
    if key not in options:
        return default
    try:
        return float(options[key])
    except ValueError:
        raise _bad(spec, f"{key}={options[key]!r} is not a number") from None
