"""A build's vector matrix written straight into its ``.npy`` file, row by row.

Holding every vector in memory until the end doubles a build's footprint beside the
catalogue (200,000 items x 256 dims is 200 MB). When the index keeps the vectors as
they are (the fp32 store searched exactly), each row is written to its place in the
file as soon as it is known, through the kernel's page cache, and the process holds
none of them; the file is the same bytes ``np.save`` would write.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np


class RowFile:
    """Rows of a float32 (n x dim) matrix, set in any order, landing in an .npy file."""

    def __init__(self, path: Path, shape: tuple[int, int]) -> None:
        self.path = path
        self.shape = shape
        made = np.lib.format.open_memmap(path, mode="w+", dtype=np.float32, shape=shape)
        self._start = made.offset  # where the data begins, after the .npy header
        del made  # the file is sized (sparse) and its header written; no page is touched
        self._row_bytes = shape[1] * 4
        self._fd = os.open(path, os.O_WRONLY)

    def __setitem__(self, row: int, vector: np.ndarray) -> None:
        data = np.ascontiguousarray(vector, dtype=np.float32).tobytes()
        os.pwrite(self._fd, data, self._start + row * self._row_bytes)

    def finish(self) -> np.ndarray:
        """The written matrix, mapped read-only (pages are read only when used)."""
        self.close()
        return np.load(self.path, mmap_mode="r")

    def close(self) -> None:
        if self._fd >= 0:
            os.close(self._fd)
            self._fd = -1

    def __del__(self) -> None:  # a build that failed midway leaves no open file behind
        self.close()

