"""Build time is a cost only when it was paid: an index whose vectors came from the
embedding cache was built in no time, and must not look cheaper to build than one that
embedded its items (the demo's second run, or any eval sharing a cache)."""

from __future__ import annotations

from types import SimpleNamespace

from trawl.pipeline.deciding import system_figures
from trawl.pipeline.systems import System
from trawl.retrievers.spec import parse_spec


def _index(seconds: float, reused: int, size: int = 1000):
    return SimpleNamespace(info=SimpleNamespace(seconds=seconds, reused=reused), bytes=size)


def test_a_build_from_cached_vectors_has_no_build_time():
    systems = {"a": System("a", parse_spec("bm25")), "b": System("b", parse_spec("bm25"))}
    indexes = {"a": _index(12.5, reused=0), "b": _index(0.01, reused=40)}
    fresh = system_figures(systems["a"], indexes, {})
    cached = system_figures(systems["b"], indexes, {})
    assert (fresh.build_seconds, cached.build_seconds) == (12.5, None)
    fused = system_figures(System("a+b", None, ("a", "b")), indexes, {})
    assert fused.build_seconds is None and fused.index_bytes == 2000
