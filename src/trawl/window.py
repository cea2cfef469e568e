"""Texts longer than a dense encoder's window, counted so that a run can say so.

A sentence-transformers model (and its ONNX export) embeds only the first
``max_seq_length`` tokens of a text, special tokens included, and drops the rest
without a word: a long item is searched by its opening only, a long query by its start.
``count_truncated`` counts such texts with the model's own tokenizer (no model loaded),
for the encoders whose window is known from their folder; for bm25 (no window) and
static models it returns None.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any

from .retrievers.spec import BUNDLED_KINDS, EncoderSpec

WINDOW_CONFIG = "sentence_bert_config.json"  # holds max_seq_length in a model folder
TOKENIZER = "tokenizer.json"


@dataclass(frozen=True)
class Truncation:
    """How many of ``total`` texts are longer than the ``window`` (in tokens)."""

    over: int
    total: int
    window: int

    def describe(self, what: str) -> str:
        """``"3 of 80 queries are longer than ..."``, for warnings and notes."""
        return (f"{self.over} of {self.total} {what} are longer than the encoder's window of "
                f"{self.window} tokens; only their first {self.window} tokens are embedded")

    def as_dict(self) -> dict[str, int]:
        return {"over": self.over, "total": self.total, "window": self.window}


def model_window(spec: EncoderSpec) -> tuple[Path, int] | None:
    """(model folder, window in tokens) of an encoder that truncates, else None."""
    if spec.kind in BUNDLED_KINDS:
        from .bundled import model_path

        folder = model_path()
    elif spec.kind in ("st", "onnx"):
        folder = Path(spec.path)
    else:
        return None
    try:
        window = int(json.loads((folder / WINDOW_CONFIG).read_text(encoding="utf-8"))
                     ["max_seq_length"])
    except (OSError, ValueError, KeyError, TypeError):
        return None
    return (folder, window) if (folder / TOKENIZER).is_file() else None


@lru_cache(maxsize=4)
def _tokenizer(folder: str) -> Any:
    from tokenizers import Tokenizer

    tok = Tokenizer.from_file(str(Path(folder) / TOKENIZER))
    tok.no_truncation()
    tok.no_padding()
    return tok


def count_truncated(texts: Sequence[str], spec: EncoderSpec,
                    prefix: str = "") -> Truncation | None:
    """How many ``texts`` (each after ``prefix``) exceed ``spec``'s window; None when the
    encoder has no window trawl can measure."""
    found = model_window(spec)
    if found is None:
        return None
    folder, window = found
    encodings = _tokenizer(str(folder)).encode_batch([prefix + t for t in texts])
    return Truncation(sum(1 for e in encodings if len(e.ids) > window), len(texts), window)
