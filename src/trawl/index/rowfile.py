"""A build's vector matrix written straight into its ``.npy`` file, rows in any order.

Holding every vector in memory until the end doubles a build's footprint beside the
catalogue (200,000 items x 256 dims is 200 MB). When the index keeps the vectors as
they are (the fp32 store searched exactly), each chunk's rows are written to their
places in the file as soon as they are known, through a shared mapping of the file, and
the process holds none of them; the file is the same bytes ``np.save`` would write.

One numpy assignment per chunk replaces a system call per row (rows of a chunk are
scattered: chunks are embedded in length order). Mapped pages count towards the
process's resident memory, so they are released every ``DROP_ROWS`` rows (the data
stays in the kernel's page cache and reaches the file). The file is allocated whole
at the start, so a full disk is an error there rather than a crash while writing.
"""

from __future__ import annotations

import errno
import mmap
import os
from pathlib import Path

import numpy as np

DROP_ROWS = 4096  # rows written between releases of the mapped pages (<= 16 MB resident)


class RowFile:
    """Rows of a float32 (n x dim) matrix, set in any order, landing in an .npy file."""

    def __init__(self, path: Path, shape: tuple[int, int]) -> None:
        self.path = path
        self.shape = shape
        self._map: mmap.mmap | None = None
        self._rows: np.ndarray | None = None
        made = np.lib.format.open_memmap(path, mode="w+", dtype=np.float32, shape=shape)
        start = made.offset  # where the data begins, after the .npy header
        size = start + shape[0] * shape[1] * 4
        del made  # the header is written; no data page is touched
        self._fd = os.open(path, os.O_RDWR)
        _allocate(self._fd, size)
        self._map = mmap.mmap(self._fd, size)
        self._rows = np.frombuffer(self._map, dtype=np.float32, count=shape[0] * shape[1],
                                   offset=start).reshape(shape)
        self._since_drop = 0

    def put(self, rows: np.ndarray | list[int], vectors: np.ndarray) -> None:
        """Set ``vectors[j]`` as row ``rows[j]`` for every j, in one assignment."""
        self._rows[rows] = vectors
        self._since_drop += len(rows)
        if self._since_drop >= DROP_ROWS:
            self._map.madvise(mmap.MADV_DONTNEED)  # shared mapping: the writes are kept
            self._since_drop = 0

    def __setitem__(self, row: int, vector: np.ndarray) -> None:
        self.put([row], np.asarray(vector)[None, :])

    def finish(self) -> np.ndarray:
        """The written matrix, mapped read-only (pages are read only when used)."""
        self.close()
        return np.load(self.path, mmap_mode="r")

    def close(self) -> None:
        if self._map is not None:
            self._rows = None  # the array holds the mapping's buffer; release it first
            self._map.close()
            self._map = None
        if self._fd >= 0:
            os.close(self._fd)
            self._fd = -1

    def __del__(self) -> None:  # a build that failed midway leaves no open file behind
        if hasattr(self, "_fd"):
            self.close()


def _allocate(fd: int, size: int) -> None:
    """Reserve the file's blocks now: a full disk is an error here, where it can be
    reported, rather than a SIGBUS on a write through the mapping."""
    if not hasattr(os, "posix_fallocate"):
        return  # the file is already sized; writes allocate as they come
    try:
        os.posix_fallocate(fd, 0, size)
    except OSError as exc:
        if exc.errno not in (errno.EOPNOTSUPP, errno.EINVAL):  # file systems without it
            raise
