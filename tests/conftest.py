"""Shared fixtures: paths to the bundled demo data and the Cranfield collection."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

os.environ.setdefault("HF_HUB_OFFLINE", "1")
os.environ.setdefault("TRANSFORMERS_OFFLINE", "1")

ROOT = Path(__file__).resolve().parents[1]
CRANFIELD = ROOT.parent / "shared" / "data" / "cranfield"
DEMO_CATALOGUE = ROOT / "corpora" / "quillfern.jsonl"
GOLD_QUERIES = ROOT / "qrels" / "quillfern-gold.queries.tsv"
GOLD_QRELS = ROOT / "qrels" / "quillfern-gold.qrels"


@pytest.fixture(scope="session")
def cranfield() -> Path:
    if not (CRANFIELD / "catalogue.jsonl").exists():
        pytest.skip(f"Cranfield collection not found at {CRANFIELD}")
    return CRANFIELD


def invoke(args: list[str], **kw):
    """Run the real CLI in-process; returns click's Result."""
    from click.testing import CliRunner

    from trawl.cli import main

    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False, **kw)
