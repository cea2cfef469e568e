"""Embedding on a Ray cluster: one model load per worker, chunks streamed in order.

Each worker is a Ray actor that loads the encoder once and embeds the chunks it is
sent. Chunks go out round-robin with a bounded number in flight (so the driver never
holds more than a few chunks of texts or vectors beyond what the build keeps), and
come back in submission order, so the build stores them exactly as the local engine
would. Actors restart when their process dies and their pending chunk is sent again
(``max_restarts``/``max_task_retries``), so a lost worker slows a build but does not
fail it.

Without an address a local Ray runtime is started for the build and stopped after
it; with one (``ray://HOST:10001`` or ``auto``) the build joins that cluster, whose
workers need trawl installed and the model folder at the same path (shared storage).
"""

from __future__ import annotations

import os
from collections import deque
from itertools import chain
from collections.abc import Callable, Iterable, Iterator
from typing import Any

import numpy as np

from ..errors import TrawlError, UsageError
from ..retrievers.loading import Encoder, EncoderLoader, default_loader
from ..retrievers.spec import EncoderSpec

INSTALL_HINT = "pip install 'trawl[ray]'"
IN_FLIGHT_PER_WORKER = 2  # chunks queued per worker: one embedding, one waiting


def import_ray() -> Any:
    """The ray module, or a one-line error saying how to install it."""
    try:
        import ray
    except ImportError:
        raise UsageError(f"the ray engine needs Ray, which is not installed; install it with "
                         f"{INSTALL_HINT}") from None
    return ray


class _Embedder:
    """Body of the Ray actor: one encoder per worker process, loaded on first use."""

    def __init__(self, spec: EncoderSpec, make_loader: Callable[[], EncoderLoader]) -> None:
        self._encoder = make_loader().encoder(spec)

    def fingerprint(self) -> str:
        return self._encoder.fingerprint

    def pid(self) -> int:
        return os.getpid()

    def encode(self, texts: list[str], batch_size: int) -> np.ndarray:
        return self._encoder.encode_documents(texts, batch_size)


class RayEngine:
    """Embeds on Ray actors; ``workers`` defaults to the cluster's CPUs (local: this
    machine's)."""

    name = "ray"

    def __init__(self, address: str | None = None, workers: int | None = None,
                 make_loader: Callable[[], EncoderLoader] = default_loader) -> None:
        if workers is not None and workers < 1:
            raise UsageError(f"workers={workers} must be at least 1")
        self._ray = import_ray()
        self.address = address
        self.workers = workers
        self._make_loader = make_loader
        self.actors: list[Any] = []

    def encode_chunks(self, spec: EncoderSpec, encoder: Encoder,
                      chunks: Iterable[list[str]], batch_size: int) -> Iterator[np.ndarray]:
        ray = self._ray
        chunks = iter(chunks)
        first = next(chunks, None)
        if first is None:  # everything came from the cache: no cluster needed
            return
        started = self._connect()
        try:
            self.actors = self._start_actors(spec, encoder.fingerprint)
            pending: deque[Any] = deque()
            limit = IN_FLIGHT_PER_WORKER * len(self.actors)
            for i, texts in enumerate(chain([first], chunks)):
                actor = self.actors[i % len(self.actors)]
                pending.append(actor.encode.remote(texts, batch_size))
                if len(pending) >= limit:
                    yield ray.get(pending.popleft())
            while pending:
                yield ray.get(pending.popleft())
        finally:
            for actor in self.actors:
                ray.kill(actor)
            self.actors = []
            if started:
                ray.shutdown()

    def _connect(self) -> bool:
        """Join the cluster (or start a local runtime); True when this call started it."""
        ray = self._ray
        if ray.is_initialized():
            return False
        try:
            if self.address is None:
                ray.init(num_cpus=self.workers or os.cpu_count(), include_dashboard=False,
                         log_to_driver=False, configure_logging=False)
            else:
                ray.init(address=self.address, log_to_driver=False, configure_logging=False)
        except (ConnectionError, RuntimeError, ValueError) as exc:
            where = self.address or "a local runtime"
            raise TrawlError(f"cannot start Ray on {where}: {str(exc).splitlines()[0]}; "
                             "check the address and that the cluster is up") from None
        return True

    def _start_actors(self, spec: EncoderSpec, fingerprint: str) -> list[Any]:
        ray = self._ray
        count = self.workers or max(1, int(ray.cluster_resources().get("CPU", 1)))
        remote = ray.remote(num_cpus=1, max_restarts=-1, max_task_retries=-1)(_Embedder)
        actors = [remote.remote(spec, self._make_loader) for _ in range(count)]
        for got in ray.get([a.fingerprint.remote() for a in actors]):
            if got != fingerprint:
                raise TrawlError(f"Ray workers load encoder {spec} with fingerprint {got}, not "
                                 f"{fingerprint} as here; give the workers the same model files "
                                 "(shared storage at the same path)")
        return actors
