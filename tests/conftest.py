"""Shared fixtures: paths to the bundled demo data and the Cranfield collection, and an
embedding cache of the session's own, so no test writes to the user's ~/.cache/trawl."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

import pytest

os.environ.setdefault("HF_HUB_OFFLINE", "1")
os.environ.setdefault("TRANSFORMERS_OFFLINE", "1")
# Set at import, before any test (or a child process it starts) looks up the cache; shared
# by the session so a model's embeddings are computed once. Tests that need a cache of
# their own still pass --cache-dir or set the variable themselves.
_SESSION_CACHE = tempfile.TemporaryDirectory(prefix="trawl-test-cache-")
os.environ["TRAWL_CACHE_DIR"] = _SESSION_CACHE.name

ROOT = Path(__file__).resolve().parents[1]
# The public Cranfield collection in trawl's format (README: "The Cranfield checks");
# TRAWL_CRANFIELD_DIR points the tests at a copy anywhere else.
CRANFIELD = Path(os.environ.get("TRAWL_CRANFIELD_DIR")
                 or ROOT.parent / "shared" / "data" / "cranfield").expanduser()
DEMO_CATALOGUE = ROOT / "corpora" / "quillfern.jsonl"
GOLD_QUERIES = ROOT / "qrels" / "quillfern-gold.queries.tsv"
GOLD_QRELS = ROOT / "qrels" / "quillfern-gold.qrels"


@pytest.fixture(scope="session")
def cranfield() -> Path:
    if not (CRANFIELD / "catalogue.jsonl").exists():
        pytest.skip(f"Cranfield collection not found at {CRANFIELD}; see README "
                    "(The Cranfield checks) to make it and set TRAWL_CRANFIELD_DIR")
    return CRANFIELD


@pytest.fixture(scope="session")
def cranfield_minilm_index(cranfield, tmp_path_factory) -> Path:
    """Every Cranfield item indexed with trawl's torch fp32 minilm, built once per session
    through the session's embedding cache (the Cranfield silver check reuses the
    embeddings): the retrieval checks search it, the ONNX check compares its vectors, and
    they are themselves checked against sentence-transformers' encode."""
    from trawl.catalogue import load_catalogue
    from trawl.index import build_index

    folder = tmp_path_factory.mktemp("cranfield-minilm") / "index"
    build_index(load_catalogue(cranfield / "catalogue.jsonl"), "minilm", folder, quiet=True)
    return folder


@pytest.fixture(scope="session")
def distilled_static(tmp_path_factory) -> Path:
    """The static encoder distilled from the bundled model (256 dims), made once per
    session with every network connection refused: distilling must work offline, and
    the Cranfield checks of the static encoder and of silver judgments share it."""
    import socket

    from trawl.distill import distill_static

    def no_network(*args, **kw):
        raise AssertionError("distill tried to open a network connection")

    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(socket, "socket", no_network)
        mp.setattr(socket, "create_connection", no_network)
        return distill_static(tmp_path_factory.mktemp("distilled") / "static", quiet=True)


def invoke(args: list[str], **kw):
    """Run the real CLI in-process; returns click's Result."""
    from click.testing import CliRunner

    from trawl.cli import main

    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False, **kw)
