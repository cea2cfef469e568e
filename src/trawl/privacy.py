"""Scrub personal data from free text before it leaves the machine or reaches a sheet.

Real queries (search-log samples, queries sent to review, LLM prompts) can hold e-mail
addresses, phone numbers, card or account numbers and postcodes. ``scrub`` replaces each
with a bracketed placeholder and counts what it replaced, so outputs can say how much was
removed. The patterns are deliberately broad: a query that loses a harmless number to a
placeholder is cheaper than a leaked phone number.
"""

from __future__ import annotations

import re
from collections.abc import Mapping

# Order matters: e-mails first (their digits must not become phone numbers), then card
# numbers written in groups of four, phone numbers (formatted digit groups), postcodes,
# and last any remaining long digit run.
PATTERNS: tuple[tuple[str, re.Pattern[str]], ...] = (
    ("email", re.compile(r"[\w.+%-]+@[\w-]+(?:\.[\w-]+)+")),
    ("number", re.compile(r"(?<!\w)\d{4}(?:[ -]\d{4}){2,3}(?!\w)")),
    # +country code, or a bracketed area code, or 3+ digit groups joined by space . or -
    ("phone", re.compile(
        r"(?<![\w+])(?:\+\d{1,3}[\s.-]?(?:\(\d{1,4}\)[\s.-]?)?\d{1,4}(?:[\s.-]?\d{2,4}){1,4}"
        r"|\(\d{2,4}\)[\s.-]?\d{3,4}[\s.-]?\d{3,4}"
        r"|\d{2,4}[\s.-]\d{3,4}[\s.-]\d{3,4}(?:[\s.-]\d{1,4})?"
        r"|\d{3}[.-]\d{4})(?!\w)")),
    # UK-style (A9 9AA .. AA9A 9AA), Canadian-style (A9A 9A9), US ZIP+4 (12345-6789)
    ("postcode", re.compile(
        r"(?<!\w)(?:[A-Za-z]{1,2}\d[A-Za-z\d]?\s?\d[A-Za-z]{2}"
        r"|[A-Za-z]\d[A-Za-z]\s?\d[A-Za-z]\d"
        r"|\d{5}-\d{4})(?!\w)")),
    ("number", re.compile(r"\d{6,}")),
)
KINDS = ("email", "phone", "postcode", "number")
MIN_PHONE_DIGITS = 7  # shorter groups ("10 15 20" minutes) are not phone numbers


def scrub(text: str) -> tuple[str, dict[str, int]]:
    """Replace personal data in ``text`` with ``[email]``, ``[phone]``, ``[postcode]``,
    ``[number]``; return the new text and how many of each kind were replaced."""
    counts = dict.fromkeys(KINDS, 0)
    for kind, pattern in PATTERNS:
        def replace(m: re.Match[str], kind: str = kind) -> str:
            if kind == "phone" and sum(c.isdigit() for c in m.group()) < MIN_PHONE_DIGITS:
                return m.group()
            counts[kind] += 1
            return f"[{kind}]"
        text = pattern.sub(replace, text)
    return text, counts


def scrub_texts(texts: Mapping[str, str]) -> tuple[dict[str, str], dict[str, int]]:
    """``scrub`` every value of ``{key: text}``; the counts are totals over all texts,
    so an output can say how much it removed in one line."""
    out: dict[str, str] = {}
    totals = dict.fromkeys(KINDS, 0)
    for key, text in texts.items():
        out[key], counts = scrub(text)
        for kind, n in counts.items():
            totals[kind] += n
    return out, totals


def describe_counts(counts: Mapping[str, int]) -> str:
    """``1 email, 2 phone``, or ``nothing found``: the words outputs print after scrubbing."""
    return ", ".join(f"{n} {kind}" for kind, n in counts.items() if n) or "nothing found"
