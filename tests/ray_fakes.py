"""Loaders that Ray workers import by name in the engine tests (workers unpickle the
loader factory, so it has to live in a module they can import, not in a test)."""

from __future__ import annotations

import os
import time
from pathlib import Path

from tests.retrieval_fakes import FakeEncoder, FakeLoader

PID_FOLDER_VAR = "TRAWL_TEST_RAY_PIDS"  # where slow workers note their process ids


class SlowEncoder(FakeEncoder):
    """FakeEncoder vectors, a tenth of a second per chunk, and a file named after the
    worker's pid once it starts embedding (so a test can kill it mid-batch)."""

    def encode_documents(self, texts, batch_size=32):
        folder = Path(os.environ[PID_FOLDER_VAR])
        (folder / f"{os.getpid()}.started").touch()
        time.sleep(0.1)
        return super().encode_documents(texts, batch_size)


class SlowLoader(FakeLoader):
    def encoder(self, spec):
        if self.fake is None or self.fake.spec != spec:
            self.fake = SlowEncoder(spec, **self.kw)
        return self.fake


def slow_loader() -> SlowLoader:
    return SlowLoader()


def fake_loader() -> FakeLoader:
    return FakeLoader()
