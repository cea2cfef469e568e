"""make demo installs only what the demo needs (WordNet); Chromium is for make test alone."""

from __future__ import annotations

import shutil
import subprocess

import pytest

from .conftest import ROOT


def dry_run(target: str) -> str:
    done = subprocess.run(["make", "-n", target], cwd=ROOT, capture_output=True, text=True,
                          timeout=60)
    assert done.returncode == 0, done.stderr
    return done.stdout


@pytest.mark.skipif(shutil.which("make") is None, reason="make is not installed")
def test_demo_installs_wordnet_but_not_chromium():
    demo, test = dry_run("demo"), dry_run("test")
    assert "wordnet-base" in demo and "chromium" not in demo
    assert "wordnet-base" in test and "chromium" in test
