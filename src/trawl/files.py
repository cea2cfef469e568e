"""Atomic file output and tolerant text input shared by every reader and writer.

Outputs go to a temporary file in the same folder and are renamed into place, so an
interrupted command never leaves a half-written artefact.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterator
from pathlib import Path
from typing import IO

from .errors import InputError, OutputError


@contextlib.contextmanager
def atomic_write(path: str | Path, mode: str = "w", encoding: str | None = "utf-8",
                 newline: str | None = "\n") -> Iterator[IO]:
    """Open a temp file beside ``path``; rename it over ``path`` only if the block succeeds.
    A path that cannot be written is an ``OutputError`` naming it, never a traceback."""
    path = Path(path)
    check_writable(path, "file")
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    except OSError as exc:
        raise OutputError(f"cannot write {path}: {exc.strerror or exc}; choose a folder you "
                          "can write to") from None
    os.fchmod(fd, 0o666 & ~_umask())  # mkstemp makes 0600; outputs are shared like any file
    binary = "b" in mode
    try:
        with os.fdopen(fd, mode, encoding=None if binary else encoding,
                       newline=None if binary else newline) as fh:
            yield fh
            fh.flush()
            os.fsync(fh.fileno())
        try:
            os.replace(tmp, path)
        except OSError as exc:
            raise OutputError(f"cannot write {path}: {exc.strerror or exc}; choose another "
                              "path") from None
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise


def check_writable(path: str | Path, what: str, folder: bool = False) -> None:
    """Refuse, before any work, a ``path`` that cannot become a file (or, with ``folder``,
    a folder): one under an existing file, a folder where a file should go (or the
    reverse), or a place without write permission."""
    path = Path(path)
    if path.exists() and path.is_dir() != folder:
        kind = "a folder" if path.is_dir() else "a file"
        raise OutputError(f"cannot write {what} {path}: it is {kind}; give "
                          f"{'a folder' if folder else 'a file name'} there instead")
    parent = path if folder and path.exists() else path.parent
    while not parent.exists() and parent != parent.parent:
        parent = parent.parent
    if not parent.is_dir():
        raise OutputError(f"cannot write {what} {path}: {parent} is a file, not a folder; "
                          "choose a path that is not inside a file")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise OutputError(f"cannot write {what} {path}: no permission to write in {parent}; "
                          "choose a folder you can write to")


def fsync_dir(folder: str | Path) -> None:
    """Make a rename inside ``folder`` durable: a rename is only on disk once its
    directory is."""
    fd = os.open(folder, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def write_text_atomic(path: str | Path, text: str) -> None:
    with atomic_write(path) as fh:
        fh.write(text)


def read_text(path: str | Path, what: str) -> str:
    """Read a UTF-8 text file (BOM and CRLF tolerated) or raise a located InputError.

    ``what`` names the kind of file for the messages, e.g. "queries file".
    """
    path = Path(path)
    try:
        data = path.read_bytes()
    except FileNotFoundError:
        raise InputError(path, f"{what} not found") from None
    except IsADirectoryError:
        raise InputError(path, f"{what} is a folder, expected a file") from None
    except OSError as exc:
        raise InputError(path, f"cannot read {what}: {exc.strerror}") from None
    return decode_utf8(path, data)


def decode_utf8(path: str | Path, data: bytes) -> str:
    """Decode bytes as UTF-8 (optional BOM), normalising line ends to ``\\n``."""
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        before = data[: exc.start].replace(b"\r\n", b"\n").replace(b"\r", b"\n")
        line = before.count(b"\n") + 1
        col = len(before) - (before.rfind(b"\n") + 1) + 1
        if line == 1 and data.startswith(b"\xef\xbb\xbf"):
            col -= 3  # the BOM is not part of the text
        raise InputError(
            path,
            f"not valid UTF-8 (byte 0x{data[exc.start]:02x} at column {col}); "
            "re-save the file with UTF-8 encoding",
            line=line,
        ) from None
    return text.replace("\r\n", "\n").replace("\r", "\n")
