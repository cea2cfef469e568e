"""Index builds on the Ray engine: the same folder, vectors, ids and cache as the local
engine; one-line errors without Ray or with options that do not apply; a worker
killed mid-batch is replaced and the build completes.

Ray start-up costs seconds, so one local runtime (2 CPUs) serves the whole module.
"""

from __future__ import annotations

import json
import os
import signal
import sys
import threading
import time
from pathlib import Path

import numpy as np
import pytest

from tests.process_helpers import make_catalogue, make_static_model
from tests.ray_fakes import PID_FOLDER_VAR, fake_loader, slow_loader
from tests.retrieval_fakes import FakeLoader
from trawl.catalogue import load_catalogue
from trawl.embedcache import EmbeddingCache
from trawl.engines import make_engine
from trawl.errors import UsageError
from trawl.index import build, build_index

ROOT = Path(__file__).resolve().parents[1]


def test_without_ray_the_engine_says_how_to_install_it(monkeypatch):
    monkeypatch.setitem(sys.modules, "ray", None)  # import ray now raises ImportError
    with pytest.raises(UsageError) as err:
        make_engine("ray")
    assert str(err.value) == ("the ray engine needs Ray, which is not installed; install it "
                              "with pip install 'trawl[ray]'")


def test_cluster_options_are_refused_for_the_local_engine():
    with pytest.raises(UsageError, match="apply to the ray engine only"):
        make_engine("local", workers=2)
    with pytest.raises(UsageError, match="engine 'spark' is not one of: local, ray"):
        make_engine("spark")


@pytest.mark.parametrize("command", ["index", "eval"])
def test_cluster_flags_without_the_ray_engine_are_refused_before_any_work(tmp_path, command):
    from tests.conftest import DEMO_CATALOGUE, GOLD_QRELS, GOLD_QUERIES, invoke

    inputs = [DEMO_CATALOGUE] + ([GOLD_QUERIES, GOLD_QRELS] if command == "eval" else [])
    result = invoke([command, *inputs, "-e", "bm25", "-o", tmp_path / "out", "--workers",
                     "2"])
    assert result.exit_code == 2
    assert result.output.strip() == "error: --workers needs --engine ray (got --engine local)"
    assert not (tmp_path / "out").exists()


@pytest.fixture(scope="module")
def ray_runtime(tmp_path_factory):
    ray = pytest.importorskip("ray", reason="Ray is not installed (pip install 'trawl[ray]')")
    pids = tmp_path_factory.mktemp("ray-pids")
    os.environ[PID_FOLDER_VAR] = str(pids)
    path = os.pathsep.join([str(ROOT), os.environ.get("PYTHONPATH", "")])
    ray.init(num_cpus=2, include_dashboard=False, log_to_driver=False,
             configure_logging=False,
             runtime_env={"env_vars": {"PYTHONPATH": path, PID_FOLDER_VAR: str(pids)}})
    yield pids
    ray.shutdown()
    os.environ.pop(PID_FOLDER_VAR, None)


def build_both(tmp_path, catalogue, spec, **ray_kw):
    """The same catalogue built with the local engine and the Ray engine (separate caches)."""
    from trawl.engines.ray import RayEngine

    loader = ray_kw.pop("loader", None)
    local = build_index(catalogue, spec, tmp_path / "local", cache_dir=tmp_path / "c1",
                        quiet=True, loader=loader)
    remote = build_index(catalogue, spec, tmp_path / "ray", cache_dir=tmp_path / "c2",
                         quiet=True, loader=loader, engine=RayEngine(workers=2, **ray_kw))
    return local, remote


def assert_same_index(a: Path, b: Path, atol: float) -> None:
    va, vb = np.load(a / "vectors.npy"), np.load(b / "vectors.npy")
    assert va.shape == vb.shape and np.allclose(va, vb, atol=atol, rtol=0)
    assert (a / "ids.txt").read_text() == (b / "ids.txt").read_text()
    ma, mb = (json.loads((f / "manifest.json").read_text()) for f in (a, b))
    assert (ma["build"]["engine"], mb["build"]["engine"]) == ("local", "ray")
    for m in (ma, mb):
        for volatile in ("engine", "created_at", "seconds", "items_per_s"):
            m["build"].pop(volatile)
    assert ma == mb


def test_static_build_on_ray_equals_the_local_build(ray_runtime, tmp_path):
    spec = f"static:{make_static_model(tmp_path / 'model')}"
    cat = load_catalogue(make_catalogue(tmp_path / "cat.jsonl", range(300)))
    local, remote = build_both(tmp_path, cat, spec)
    assert remote.embedded == local.embedded == 300
    assert_same_index(tmp_path / "local", tmp_path / "ray", atol=1e-6)


@pytest.mark.slow
def test_minilm_build_on_ray_equals_the_local_build(ray_runtime, tmp_path):
    cat = load_catalogue(make_catalogue(tmp_path / "cat.jsonl", range(200)))
    build_both(tmp_path, cat, "minilm")
    assert_same_index(tmp_path / "local", tmp_path / "ray", atol=1e-5)


def test_cached_items_are_not_sent_to_workers(ray_runtime, tmp_path):
    from trawl.engines.ray import RayEngine

    cat = load_catalogue(make_catalogue(tmp_path / "cat.jsonl", range(100)))
    build_index(cat, "minilm", tmp_path / "a", cache_dir=tmp_path / "c", quiet=True,
                loader=FakeLoader())
    grown = load_catalogue(make_catalogue(tmp_path / "cat.jsonl", range(130)))
    sent: list[int] = []

    class Counting(RayEngine):
        def encode_chunks(self, spec, encoder, chunks, batch_size):
            for texts in chunks:
                sent.append(len(texts))
                yield from super().encode_chunks(spec, encoder, [texts], batch_size)

    info = build_index(grown, "minilm", tmp_path / "b", cache_dir=tmp_path / "c", quiet=True,
                       loader=FakeLoader(), engine=Counting(workers=1, make_loader=fake_loader))
    assert sum(sent) == 30 and info.embedded == 30 and info.reused == 100
    with EmbeddingCache(tmp_path / "c", "fake-weights-1") as cache:
        assert len(cache.get(_keys(grown))) == 130


def test_a_fully_cached_build_does_not_start_workers(ray_runtime, tmp_path):
    from trawl.engines.ray import RayEngine

    class NoCluster(RayEngine):
        def _connect(self):
            raise AssertionError("a build with nothing to embed joined a cluster")

    cat = load_catalogue(make_catalogue(tmp_path / "cat.jsonl", range(50)))
    build_index(cat, "minilm", tmp_path / "a", cache_dir=tmp_path / "c", quiet=True,
                loader=FakeLoader())
    info = build_index(cat, "minilm", tmp_path / "b", cache_dir=tmp_path / "c", quiet=True,
                       loader=FakeLoader(), engine=NoCluster(workers=1))
    assert (info.embedded, info.reused) == (0, 50)


def _keys(catalogue):
    from trawl.embedcache import text_key

    return [text_key(catalogue.template.render(item)) for item in catalogue.items]


def test_a_worker_killed_mid_batch_is_replaced_and_the_build_completes(ray_runtime, tmp_path,
                                                                      monkeypatch):
    from trawl.engines.ray import RayEngine

    monkeypatch.setattr(build, "EMBED_CHUNK", 10)  # 30 chunks of 0.1 s each
    cat = load_catalogue(make_catalogue(tmp_path / "cat.jsonl", range(300)))
    for f in ray_runtime.glob("*.started"):
        f.unlink()
    killed: list[int] = []

    def kill_first_worker_that_starts() -> None:
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline and not killed:
            started = list(ray_runtime.glob("*.started"))
            if started:
                pid = int(started[0].stem)
                os.kill(pid, signal.SIGKILL)
                killed.append(pid)
            time.sleep(0.02)

    killer = threading.Thread(target=kill_first_worker_that_starts)
    killer.start()
    info = build_index(cat, "minilm", tmp_path / "ray", cache_dir=tmp_path / "c2", quiet=True,
                       loader=FakeLoader(),
                       engine=RayEngine(workers=2, make_loader=slow_loader))
    killer.join()
    assert killed and info.embedded == 300
    restarted = {int(f.stem) for f in ray_runtime.glob("*.started")} - set(killed)
    assert len(restarted) >= 2  # the other worker and the replacement of the killed one
    build_index(cat, "minilm", tmp_path / "local", cache_dir=tmp_path / "c1", quiet=True,
                loader=FakeLoader())
    assert_same_index(tmp_path / "local", tmp_path / "ray", atol=0)
