"""Strings that look the same but differ: Unicode normalisation, invisible characters, case.

An item id written ``café`` in the catalogue (one code point for é, NFC) and ``café`` in
the qrels (e plus a combining accent, NFD) are different ids that print identically, so
a judgment silently counts as "not in the catalogue" and a query scores 0. The same
goes for a zero-width space inside an id and for destination types ``FAQ`` and ``faq``.
Readers and ``check`` group such strings by ``key`` and say how they differ, showing
them with ``visible`` so the difference can be seen in a terminal.
"""

from __future__ import annotations

import unicodedata
from collections.abc import Iterable

# Characters that draw nothing: format characters (zero-width space and joiners, bidi
# marks, soft hyphen, byte-order mark) and controls, plus the blank letters below.
INVISIBLE_CATEGORIES = frozenset({"Cf", "Cc", "Co", "Cn", "Cs", "Zl", "Zp", "Zs"})
BLANK_LETTERS = frozenset("\u115f\u1160\u3164\uffa0\u2800")  # Hangul fillers, braille blank


def is_invisible(char: str) -> bool:
    return char in BLANK_LETTERS or unicodedata.category(char) in INVISIBLE_CATEGORIES


def has_visible(text: str) -> bool:
    """True when ``text`` draws at least one character."""
    return any(not is_invisible(c) for c in text)


def visible(text: str) -> str:
    """``text`` quoted, with every character that does not draw itself plainly (invisible
    ones, combining marks, non-ASCII spaces) escaped as ``\\uXXXX``: ``'cafe\\u0301'``."""
    out = []
    for c in text:
        plain = c.isprintable() and not is_invisible(c) and not unicodedata.combining(c)
        out.append(c if plain or c == " " else
                   f"\\u{ord(c):04x}" if ord(c) <= 0xFFFF else f"\\U{ord(c):08x}")
    body = "".join(out).replace("'", "\\'")
    return f"'{body}'"


def key(text: str) -> str:
    """What ``text`` looks like: NFKC form, invisible characters other than white space
    dropped, runs of white space as one space, case folded."""
    kept = "".join(c for c in unicodedata.normalize("NFKC", text)
                   if c.isspace() or not is_invisible(c))
    return " ".join(kept.split()).casefold()


def difference(a: str, b: str) -> str:
    """How two look-alike strings differ, in words."""
    if unicodedata.normalize("NFC", a) == unicodedata.normalize("NFC", b):
        return "Unicode normalisation, NFC vs NFD"
    strip_a = "".join(c for c in a if not is_invisible(c))
    strip_b = "".join(c for c in b if not is_invisible(c))
    if strip_a == strip_b:
        return "invisible characters"
    if strip_a.casefold() == strip_b.casefold():
        return "case only"
    return "compatibility forms such as full-width letters"


def groups(values: Iterable[str]) -> list[tuple[str, ...]]:
    """Sets of two or more distinct values that look alike, in first-seen order."""
    by_key: dict[str, dict[str, None]] = {}
    for v in values:
        by_key.setdefault(key(v), {})[v] = None
    return [tuple(g) for g in by_key.values() if len(g) > 1]


def describe(values: tuple[str, ...]) -> str:
    """``'cafe\\u0301' and 'café' (differ in Unicode normalisation (NFC vs NFD))``."""
    shown = " and ".join(visible(v) for v in values)
    return f"{shown} (differ in {difference(values[0], values[1])})"


def near_matches(missing: Iterable[str], known: Iterable[str]) -> dict[str, str]:
    """For each string in ``missing``, a string of ``known`` that looks like it (if any)."""
    by_key: dict[str, str] = {}
    for k in known:
        by_key.setdefault(key(k), k)
    return {m: by_key[key(m)] for m in missing if key(m) in by_key}


def shown(text: str) -> str:
    """``text`` as is when every character draws itself plainly, else ``visible(text)``."""
    plain = all(c.isprintable() and not is_invisible(c) and not unicodedata.combining(c)
                for c in text)
    return text if plain else visible(text)


def near_miss_lines(missing: Iterable[str], known: Iterable[str]) -> list[str]:
    """``'q1\\u200b' looks like 'q1' (differ in invisible characters)`` for each string of
    ``missing`` that looks like one of ``known``."""
    return [f"{visible(m)} looks like {visible(k)} (differ in {difference(m, k)})"
            for m, k in near_matches(missing, known).items()]
