"""Distil a static (model2vec) encoder from the bundled model, offline.

model2vec runs the bundled transformer once over its vocabulary, reduces the token
vectors with PCA and weights them by token frequency, giving an encoder that embeds
by table look-up (``static:DIR``).
"""

from __future__ import annotations

import contextlib
import io
import os
import shutil
from pathlib import Path

from . import bundled
from .errors import UsageError
from .progress import shows_bars

DEFAULT_PCA_DIMS = 256
MODEL_DIMS = 384  # all-MiniLM-L6-v2's output size: PCA cannot keep more


def distill_static(out_dir: str | Path, pca_dims: int = DEFAULT_PCA_DIMS,
                   quiet: bool = False) -> Path:
    """Write a model2vec model to ``out_dir`` (replaced atomically) and return its path."""
    if not 1 <= pca_dims <= MODEL_DIMS:
        raise UsageError(f"vector size {pca_dims} must be between 1 and {MODEL_DIMS} "
                         "(the bundled model's vector size, the most PCA can keep)")
    out = Path(out_dir)
    if out.exists() and not (out / "config.json").is_file() and (
            not out.is_dir() or any(out.iterdir())):
        raise UsageError(f"{out} exists and is not a static model folder; choose a new "
                         "or empty folder")
    os.environ["HF_HUB_OFFLINE"] = "1"   # the bundled folder is local; never fetch
    import transformers
    from model2vec.distill import distill

    transformers.logging.set_verbosity_error()
    transformers.logging.disable_progress_bar()
    # model2vec draws its own progress bars on stderr: only on a terminal, and not quiet
    with (contextlib.nullcontext() if shows_bars(quiet) else
          contextlib.redirect_stderr(io.StringIO())):
        model = distill(model_name=str(bundled.model_path()), pca_dims=pca_dims, device="cpu")
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = out.parent / f".{out.name}.building-{os.getpid()}"
    shutil.rmtree(tmp, ignore_errors=True)
    try:
        model.save_pretrained(str(tmp))
        old = out.parent / f".{out.name}.replaced-{os.getpid()}"
        if out.exists():
            os.rename(out, old)
        os.rename(tmp, out)
        shutil.rmtree(old, ignore_errors=True)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return out
