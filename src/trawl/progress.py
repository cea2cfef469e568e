"""Progress bars on stderr for work that takes more than a second.

Shown only when stderr is a terminal: in a log or a pipe a bar is a trail of ``\\r``
lines that nobody watches, and silent with ``--quiet`` either way.
"""

from __future__ import annotations

import sys
from typing import TextIO

from tqdm.auto import tqdm


def shows_bars(quiet: bool = False, stream: TextIO | None = None) -> bool:
    """Whether a bar would be drawn: not quiet, and the stream is a terminal."""
    stream = sys.stderr if stream is None else stream
    try:
        return not quiet and stream.isatty()
    except (AttributeError, ValueError):  # no isatty, or a closed stream
        return False


def progress(total: int | None = None, desc: str = "", quiet: bool = False, unit: str = "it"):
    """A tqdm bar on stderr, drawn only when :func:`shows_bars` says so."""
    return tqdm(total=total, desc=desc, disable=not shows_bars(quiet), unit=unit, leave=False,
                dynamic_ncols=True, file=sys.stderr)
