"""The user's domain lexicon: the catalogue's wording on the left, people's on the right.

One entry per line, ``catalogue wording = everyday wording[, another]``; blank lines and
lines starting with ``#`` are ignored. Example (a community library app)::

    # catalogue wording = what members type
    interlibrary loan = borrow from another library, book from elsewhere
    circulation desk = front desk, checkout counter

Paraphrasing swaps left-hand wordings in a query for right-hand ones.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from types import MappingProxyType
from typing import Mapping

from ..errors import InputError
from ..files import read_text
from .text import words


@dataclass(frozen=True)
class Lexicon:
    """Phrase (tuple of lower-cased words) -> everyday alternatives."""

    entries: Mapping[tuple[str, ...], tuple[str, ...]]
    source: str = ""

    @property
    def longest(self) -> int:
        return max((len(k) for k in self.entries), default=0)


EMPTY = Lexicon(MappingProxyType({}))


def read_lexicon(path: str | Path) -> Lexicon:
    """Read a lexicon file; a malformed line is an error naming file and line."""
    text = read_text(path, "lexicon file")
    out: dict[tuple[str, ...], list[str]] = {}
    for n, line in enumerate(text.split("\n"), start=1):
        line = line.strip()
        if not line or line.startswith("#"):
            continue
        if "=" not in line:
            raise InputError(path, "expected 'catalogue wording = everyday wording[, ...]', "
                             "found no '='", line=n)
        left, right = line.split("=", 1)
        key = tuple(words(left))
        alts = [" ".join(words(a)) for a in right.split(",")]
        alts = [a for a in alts if a]
        if not key:
            raise InputError(path, "nothing left of '='; name the catalogue's wording",
                             line=n, field="catalogue wording")
        if not alts:
            raise InputError(path, "nothing right of '='; give at least one everyday wording",
                             line=n, field="everyday wording")
        bucket = out.setdefault(key, [])
        bucket.extend(a for a in alts if a not in bucket)
    return Lexicon(MappingProxyType({k: tuple(v) for k, v in out.items()}), str(path))
