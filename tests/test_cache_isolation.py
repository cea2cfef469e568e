"""The suite never touches the user's embedding cache: conftest points TRAWL_CACHE_DIR at a
temporary folder before any test runs (two tests used to leave indexes in ~/.cache/trawl)."""

from __future__ import annotations

import tempfile
from pathlib import Path

from trawl.embedcache import default_cache_dir


def test_default_cache_is_a_temporary_folder_during_tests():
    cache = default_cache_dir().resolve()
    assert cache.is_relative_to(Path(tempfile.gettempdir()).resolve())
    assert not cache.is_relative_to((Path.home() / ".cache").resolve())
