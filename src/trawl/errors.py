"""The user-facing exception family.

Library code raises these; only the CLI turns them into ``error: ...`` and exit code 2.
Anything else that escapes is a bug and keeps its traceback.
"""

from __future__ import annotations

from pathlib import Path


class TrawlError(Exception):
    """A problem the user can fix: bad input, conflicting options, stale artefacts."""


class InputError(TrawlError):
    """A file the user gave us is malformed; the message names file, line and field."""

    def __init__(self, path: str | Path, message: str, line: int | None = None,
                 field: str | None = None) -> None:
        where = str(path) if line is None else f"{path}:{line}"
        what = message if field is None else f"{field}: {message}"
        super().__init__(f"{where}: {what}")
        self.path = str(path)
        self.line = line
        self.field = field


class CatalogueError(InputError):
    """The catalogue file cannot be loaded as a valid catalogue."""


class UsageError(TrawlError):
    """Options or arguments conflict or are out of range."""


class OutputError(TrawlError):
    """A file or folder trawl must write cannot be written; the message names the path
    and what to do."""


class StaleIndexError(TrawlError):
    """An index no longer matches the catalogue it was built from."""


class EncoderMismatchError(TrawlError):
    """An index is used with an encoder other than the one it was built with."""
