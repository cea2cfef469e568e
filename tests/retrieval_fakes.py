"""A stand-in encoder for index tests: deterministic random vectors, no model to load.

Index mechanics (caching, staleness, tie order, atomic replacement) do not depend on
what the vectors mean, and random Gaussian vectors make brute-force checks exact.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import numpy as np

from trawl.catalogue import Catalogue, Item
from trawl.retrievers.loading import EncoderLoader, normalise


def text_vector(text: str, dim: int) -> np.ndarray:
    seed = int.from_bytes(hashlib.sha256(text.encode()).digest()[:8], "little")
    return np.random.default_rng(seed).standard_normal(dim)


class FakeEncoder:
    def __init__(self, spec, dim: int = 16, fingerprint: str = "fake-weights-1",
                 fail_after_calls: int | None = None) -> None:
        self.spec = spec
        self.dim = dim
        self.fingerprint = fingerprint
        self.fail_after_calls = fail_after_calls
        self.document_calls: list[list[str]] = []

    def encode_documents(self, texts, batch_size=32):
        if self.fail_after_calls is not None and len(self.document_calls) >= self.fail_after_calls:
            raise KeyboardInterrupt("simulated interruption")
        self.document_calls.append(list(texts))
        return normalise(np.stack([text_vector(t, self.dim) for t in texts]))

    def encode_queries(self, texts, batch_size=32):
        return normalise(np.stack([text_vector("query: " + t, self.dim) for t in texts]))

    @property
    def embedded(self) -> int:
        return sum(len(c) for c in self.document_calls)


class FakeLoader(EncoderLoader):
    """Hands out one FakeEncoder for every dense spec."""

    def __init__(self, **kw) -> None:
        super().__init__()
        self.kw = kw
        self.fake: FakeEncoder | None = None

    def encoder(self, spec):
        if self.fake is None or self.fake.spec != spec:
            self.fake = FakeEncoder(spec, **self.kw)
        return self.fake


def tiny_catalogue(n: int = 30, path: str = "tiny.jsonl", edit: dict | None = None) -> Catalogue:
    """``n`` invented items (community library app); ``edit`` maps id -> new title."""
    topics = ["renew a loan", "reserve a room", "late fees", "lost card", "opening hours",
              "e-book lending", "donate books", "printing", "children's events", "accessibility"]
    items = []
    for i in range(n):
        title = (edit or {}).get(f"it{i:03d}", f"{topics[i % len(topics)]} {i}")
        items.append(Item(f"it{i:03d}", ("article", "faq", "screen")[i % 3], title,
                          f"How to {topics[i % len(topics)]} at the branch, case {i}."))
    return Catalogue(path, tuple(items))


def files_except_build(folder: Path) -> dict[str, bytes]:
    """Every file's bytes, with the manifest's volatile build section removed."""
    out = {}
    for p in sorted(folder.rglob("*")):
        if p.is_file():
            data = p.read_bytes()
            if p.name == "manifest.json":
                m = json.loads(data)
                m.pop("build")
                data = json.dumps(m).encode()
            out[str(p.relative_to(folder))] = data
    return out
