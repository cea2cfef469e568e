"""Atomic output files."""

from __future__ import annotations

import os

from trawl.files import write_text_atomic


def test_outputs_get_ordinary_file_permissions(tmp_path):
    old = os.umask(0o022)
    try:
        write_text_atomic(tmp_path / "out.txt", "x")
    finally:
        os.umask(old)
    assert (tmp_path / "out.txt").stat().st_mode & 0o777 == 0o644
