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


def looks_like(line: str) -> str:
    """What another of trawl's text files a line resembles, as a clause to add to a
    message ('' when none): the usual mistake is files given in the wrong order."""
    parts = line.split()
    if len(parts) == 6 and parts[1] == "Q0":
        return ("; this line looks like a TREC run (qid Q0 item_id rank score tag): check "
                "the order of the files")
    if len(parts) == 4 and parts[1] == "0" and parts[3].lstrip("-").isdigit():
        return ("; this line looks like qrels (qid 0 item_id grade): check the order of the "
                "files")
    if "\t" in line.strip("\n") and len(line.split("\t")) == 2 and len(parts) > 1:
        return ("; this line looks like a queries file (qid<TAB>text): check the order of "
                "the files")
    return ""
