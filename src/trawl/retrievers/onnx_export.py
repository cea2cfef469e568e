"""Exporting a sentence-transformers BERT-style model to ONNX, once per model, into a cache.

The export uses torch's own (TorchScript-based) exporter: the graph maps tokens to token
vectors (``last_hidden_state``); pooling and normalisation run in numpy afterwards, so a
model exported elsewhere (``onnx:DIR``) goes through the same code. The attention mask
is turned into the additive form BERT adds to attention scores inside the wrapper,
because the library's own mask builder branches on data and does not trace.

Exports live in ``CACHE/onnx/<model digest>/`` (beside the embedding cache), with the
tokenizer files copied in, so the folder is a self-contained ``onnx:DIR`` model. A
folder is written under a temporary name and renamed into place, so a reader sees a
whole export or none; the int8 copy is added later the same way (temporary file, then
rename). ``export.json`` records what made it.
"""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from importlib import metadata
from pathlib import Path
from typing import Any

from ..errors import TrawlError

OPSET = 17            # ONNX opset of the export; onnxruntime has run it for years
EXPORT_RECIPE = 1     # bump when the export graph changes, so cached exports are redone
MODEL_FILE = "model.onnx"
INT8_FILE = "model-int8-per-channel.onnx"  # the name says the quantiser settings
EXPORT_NOTE = "export.json"
INPUT_NAMES = ("input_ids", "attention_mask", "token_type_ids")
TOKENIZER_FILES = ("tokenizer.json", "tokenizer_config.json", "special_tokens_map.json",
                   "vocab.txt", "sentence_bert_config.json", "config.json")
POOLING_CONFIG = Path("1_Pooling") / "config.json"


def export_dir(cache_root: Path, digest: str) -> Path:
    return Path(cache_root) / "onnx" / digest[:16]


def cached_export(model_dir: str | Path, digest: str, cache_root: str | Path) -> Path:
    """The ONNX export of ``model_dir`` (weights digest ``digest``), exported if absent."""
    folder = export_dir(Path(cache_root), digest)
    if _current(folder, digest):
        return folder
    folder.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{folder.name}.", dir=folder.parent))
    os.chmod(tmp, 0o755)
    try:
        export_model(Path(model_dir), tmp)
        _copy_tokenizer(Path(model_dir), tmp)
        note = {"model_digest": digest, "recipe": EXPORT_RECIPE, "opset": OPSET,
                "exporter": f"torch {metadata.version('torch')} (TorchScript-based)",
                "inputs": list(INPUT_NAMES), "output": "token_embeddings"}
        (tmp / EXPORT_NOTE).write_text(json.dumps(note, indent=2) + "\n", encoding="utf-8")
        _rename_into_place(tmp, folder, digest)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return folder


def export_note(folder: Path) -> dict[str, Any]:
    """What ``export.json`` says, or {} for a folder trawl did not export."""
    try:
        return json.loads((folder / EXPORT_NOTE).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return {}


def _current(folder: Path, digest: str) -> bool:
    note = export_note(folder)
    return (note.get("model_digest") == digest and note.get("recipe") == EXPORT_RECIPE
            and (folder / MODEL_FILE).is_file())


def _rename_into_place(tmp: Path, folder: Path, digest: str) -> None:
    """Move a finished export into place; a concurrent exporter that got there first wins."""
    if folder.exists():
        if _current(folder, digest):
            return
        old = folder.parent / f".{folder.name}.old-{os.getpid()}"
        os.rename(folder, old)
        shutil.rmtree(old, ignore_errors=True)
    try:
        os.rename(tmp, folder)
    except OSError:
        if not _current(folder, digest):
            raise


def _copy_tokenizer(model_dir: Path, dest: Path) -> None:
    for name in TOKENIZER_FILES:
        if (model_dir / name).is_file():
            shutil.copyfile(model_dir / name, dest / name)
    if (model_dir / POOLING_CONFIG).is_file():
        (dest / POOLING_CONFIG.parent).mkdir()
        shutil.copyfile(model_dir / POOLING_CONFIG, dest / POOLING_CONFIG)


def export_model(model_dir: Path, dest: Path) -> None:
    """Write ``dest/model.onnx``: token ids, mask and type ids in, token vectors out."""
    import warnings

    import torch
    import transformers
    from transformers import AutoModel

    transformers.logging.set_verbosity_error()
    transformers.logging.disable_progress_bar()
    try:
        model = AutoModel.from_pretrained(str(model_dir), local_files_only=True,
                                          attn_implementation="eager").eval()
    except (OSError, ValueError) as exc:
        raise TrawlError(f"cannot load {model_dir} for ONNX export: "
                         f"{str(exc).splitlines()[0]}") from None
    if not hasattr(model, "embeddings") or not hasattr(model, "encoder"):
        raise TrawlError(f"cannot export {model_dir} to ONNX: only BERT-style encoders "
                         "(embeddings + encoder) are supported; export it yourself and use "
                         "onnx:DIR")
    example = _example_inputs()
    axes = {name: {0: "batch", 1: "tokens"} for name in (*INPUT_NAMES, "token_embeddings")}
    with warnings.catch_warnings(), torch.no_grad():
        # the TorchScript exporter is marked deprecated in favour of one that needs an
        # extra package (onnxscript); it remains torch's stock exporter for this graph
        warnings.simplefilter("ignore")
        torch.onnx.export(_token_vectors(model), example, str(dest / MODEL_FILE),
                          dynamo=False, input_names=list(INPUT_NAMES),
                          output_names=["token_embeddings"], dynamic_axes=axes,
                          opset_version=OPSET, do_constant_folding=True)


def _example_inputs():
    """Two rows of different lengths, so the traced graph sees padding."""
    import torch

    ids = torch.tensor([[101, 7592, 2088, 102, 0, 0], [101, 1037, 2936, 6251, 2055, 102]])
    mask = (ids != 0).long()
    return ids, mask, torch.zeros_like(ids)


def _token_vectors(bert):
    """BERT embeddings + encoder as a torch module, with the additive attention mask built
    in its forward (torch is imported only when exporting)."""
    import torch

    class TokenVectors(torch.nn.Module):
        def __init__(self) -> None:
            super().__init__()
            self.bert = bert

        def forward(self, input_ids, attention_mask, token_type_ids):
            hidden = self.bert.embeddings(input_ids=input_ids, token_type_ids=token_type_ids)
            keep = attention_mask[:, None, None, :].to(hidden.dtype)
            additive = (1.0 - keep) * torch.finfo(hidden.dtype).min
            return self.bert.encoder(hidden, attention_mask=additive).last_hidden_state

    return TokenVectors()


def quantised_copy(folder: Path) -> Path:
    """The export with onnxruntime's dynamic int8 quantisation (weights int8 with one
    scale per output channel, activations quantised per call), made once, renamed into place.

    One scale per channel, because one per tensor moved Cranfield vectors too far
    (cosine to fp32 as low as 0.89 on the first 150 abstracts; 0.992 per channel).
    """
    target = folder / INT8_FILE
    if target.is_file():
        return target
    import logging

    from onnxruntime.quantization import QuantType, quantize_dynamic

    fd, name = tempfile.mkstemp(prefix=f".{INT8_FILE}.", suffix=".onnx", dir=folder)
    os.close(fd)
    quiet = logging.getLogger().level
    logging.getLogger().setLevel(logging.ERROR)  # the quantiser logs advice at WARNING
    try:
        quantize_dynamic(str(folder / MODEL_FILE), name, weight_type=QuantType.QInt8,
                         per_channel=True)
        os.chmod(name, 0o644)
        os.replace(name, target)
    finally:
        logging.getLogger().setLevel(quiet)
        if os.path.exists(name):
            os.unlink(name)
    return target

