"""Where an index build's embedding runs: in this process, or on a Ray cluster.

The build (``index.build``) decides what to embed (only texts the embedding cache
lacks), in which chunks and batches, and stores every vector; an engine only turns
chunks of texts into vectors and hands them back in order. So both engines write the
same index folder and the same cache, and the result does not depend on where the
vectors were computed.
"""

from __future__ import annotations

from collections import deque
from collections.abc import Iterable, Iterator
from concurrent.futures import Future, ThreadPoolExecutor
from typing import Protocol

import numpy as np

from ..errors import UsageError
from ..retrievers.loading import Encoder
from ..retrievers.spec import EncoderSpec

ENGINES = ("local", "ray")


class Engine(Protocol):
    """Turns chunks of document texts into vectors, one array per chunk, in order."""

    name: str

    def encode_chunks(self, spec: EncoderSpec, encoder: Encoder,
                      chunks: Iterable[list[str]], batch_size: int) -> Iterator[np.ndarray]: ...


class LocalEngine:
    """Embeds in this process with the encoder the build already holds.

    One chunk is embedded on a helper thread while the build stores the previous one
    (the encoders and SQLite release the interpreter lock while they work), so storing
    vectors overlaps embedding instead of adding to it. Chunks and batches are the same
    as embedding in turn, so the vectors are too.
    """

    name = "local"

    def encode_chunks(self, spec: EncoderSpec, encoder: Encoder,
                      chunks: Iterable[list[str]], batch_size: int) -> Iterator[np.ndarray]:
        with ThreadPoolExecutor(max_workers=1, thread_name_prefix="trawl-embed") as pool:
            pending: deque[Future[np.ndarray]] = deque()
            try:
                for texts in chunks:
                    pending.append(pool.submit(encoder.encode_documents, texts, batch_size))
                    if len(pending) > 1:
                        yield pending.popleft().result()
                while pending:
                    yield pending.popleft().result()
            finally:
                for future in pending:
                    future.cancel()


def make_engine(name: str = "local", address: str | None = None,
                workers: int | None = None) -> Engine:
    """The engine called ``name``; ``address`` and ``workers`` apply to Ray only."""
    if name not in ENGINES:
        raise UsageError(f"engine {name!r} is not one of: {', '.join(ENGINES)}")
    if name == "local":
        if address is not None or workers is not None:
            raise UsageError("a cluster address and a worker count apply to the ray engine "
                             "only; choose engine ray or drop them")
        return LocalEngine()
    from .ray import RayEngine

    return RayEngine(address=address, workers=workers)
