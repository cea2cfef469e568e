"""One grammar for the numbers in the files trawl reads: runs, qrels and review sheets.

Python's ``int`` and ``float`` accept more than a file format should (``1_000``,
non-ASCII digits, ``inf``, ``nan``), and readers that each used their own accepted a
number in one file type that another refused. Every reader uses these two rules:

- **whole numbers** (grades, ranks): up to 18 ASCII digits with an optional sign, ``2``,
  ``-1``, ``+3``; a decimal point followed only by zeros, ``2.0``, is the same whole
  number (spreadsheets re-save grades that way). ``2.5``, ``2e0``, ``1_0`` and ``٣``
  are not.
- **scores**: decimal or exponent notation with an optional sign, ``12``, ``0.5``,
  ``.5``, ``5.``, ``-3.25``, ``1.5e-3``, ``2E+10``; the value must be finite, so
  ``nan``, ``inf`` and ``1e999`` are refused.
"""

from __future__ import annotations

import math
import re

WHOLE = re.compile(r"[+-]?[0-9]{1,18}(?:\.0*)?")  # 18 digits always fit in 64 bits
SCORE = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
WHOLE_FORMS = "whole numbers of up to 18 digits such as 0, 1, 2 or -1"
SCORE_FORMS = "finite numbers such as 12, 0.5, -3.25 or 1.5e-3"


def parse_whole(text: str) -> int | None:
    """The whole number ``text`` writes, or None when it is not one (see module doc)."""
    if not WHOLE.fullmatch(text):
        return None
    return int(text.split(".", 1)[0])


def parse_score(text: str) -> float | None:
    """The finite number ``text`` writes, or None when it is not one (see module doc)."""
    if not SCORE.fullmatch(text):
        return None
    value = float(text)
    return value if math.isfinite(value) else None
