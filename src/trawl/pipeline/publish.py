"""Publishing an evaluation's outputs as a whole, and knowing a kept file is unchanged.

Tables, ``agreement.json``, ``results.json`` and ``report.html`` are written into a
staging folder inside the output folder and moved into place only when everything has
been written, so an evaluation stopped part way (killed, out of memory, an error) leaves
the previous outputs as they were, never new tables beside an old report. The last
file moved in is ``outputs.json``, which lists every published file with its size and
SHA-256: a folder without it is incomplete (a kill during the moves themselves), and
the next evaluation removes what the previous one published before publishing its own.
Runs and their latency sidecars are not staged: they are reused by later evaluations,
and each sidecar records the size and checksum of its run for that (``file_stamp``).
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import shutil
from collections.abc import Iterator, Mapping
from pathlib import Path
from typing import Any

from ..files import atomic_write, fsync_dir

STAMP = "outputs.json"
STAMP_FORMAT = "trawl-outputs/1"
STAGING_PREFIX = ".staging-"
HASH_BLOCK = 1 << 20


def file_stamp(path: Path) -> dict[str, Any]:
    """Size and SHA-256 of a file, to tell later whether it is what was written."""
    digest = hashlib.sha256()
    size = 0
    with path.open("rb") as fh:
        while block := fh.read(HASH_BLOCK):
            digest.update(block)
            size += len(block)
    return {"bytes": size, "sha256": digest.hexdigest()}


def stamp_matches(path: Path, stamp: Any) -> bool:
    """Whether ``path`` still has the size and checksum recorded in ``stamp``."""
    if not isinstance(stamp, Mapping):
        return False
    try:
        if path.stat().st_size != stamp.get("bytes"):
            return False  # cheap first: a truncated file is caught without reading it
        return file_stamp(path) == dict(stamp)
    except OSError:
        return False


def clear_leftovers(out: Path) -> None:
    """Remove staging folders that a stopped evaluation left in ``out``."""
    if out.is_dir():
        for old in out.glob(f"{STAGING_PREFIX}*"):
            shutil.rmtree(old, ignore_errors=True)


@contextlib.contextmanager
def staged(out: Path) -> Iterator[Path]:
    """A fresh staging folder inside ``out``, removed whatever happens."""
    stage = out / f"{STAGING_PREFIX}{os.getpid()}"
    shutil.rmtree(stage, ignore_errors=True)
    stage.mkdir(parents=True)
    try:
        yield stage
    finally:
        shutil.rmtree(stage, ignore_errors=True)


def published(out: Path) -> dict[str, Any] | None:
    """The files of the last complete evaluation in ``out`` (``outputs.json``), or None."""
    try:
        data = json.loads((out / STAMP).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    ok = isinstance(data, dict) and data.get("format") == STAMP_FORMAT
    return data.get("files") if ok and isinstance(data.get("files"), dict) else None


def publish(stage: Path, out: Path) -> dict[str, Any]:
    """Move every staged file into ``out``; drop what the previous evaluation published
    and this one did not; write ``outputs.json`` last. Returns its file list."""
    before = published(out) or {}
    with contextlib.suppress(FileNotFoundError):
        (out / STAMP).unlink()
    fsync_dir(out)
    files: dict[str, Any] = {}
    for path in sorted(p for p in stage.rglob("*") if p.is_file()):
        rel = path.relative_to(stage).as_posix()
        files[rel] = file_stamp(path)
        dest = out / rel
        dest.parent.mkdir(parents=True, exist_ok=True)
        os.replace(path, dest)
    for rel in before:
        if rel not in files and rel != STAMP:
            with contextlib.suppress(OSError):
                (out / rel).unlink()
    with atomic_write(out / STAMP) as fh:
        json.dump({"format": STAMP_FORMAT, "files": files}, fh, indent=2, ensure_ascii=False)
        fh.write("\n")
    return files

