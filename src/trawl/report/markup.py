"""Escaped-by-default HTML/SVG building.

Every string passed as a child or attribute value is escaped; only ``Markup`` (produced
by this module) passes through. Catalogue and query text comes from users' exports and
must never become live markup in a report, so escaping is the default, not a habit.
"""

from __future__ import annotations

import html
import re
from collections.abc import Iterable
from typing import Any


class Markup(str):
    """A string already known to be safe HTML (built by ``el`` or ``join``)."""


Child = Any  # str | int | float | Markup | None | Iterable of those


def escape(value: Any) -> Markup:
    """Text as HTML: ``<``, ``>``, ``&`` and both quotes become entities."""
    if isinstance(value, Markup):
        return value
    return Markup(html.escape(str(value), quote=True))


def _children(children: Iterable[Child]) -> str:
    out = []
    for c in children:
        if c is None or c is False:
            continue
        if isinstance(c, (str, int, float)):
            out.append(escape(c))
        else:
            out.append(_children(c))
    return "".join(out)


VOID = {"meta", "br", "hr", "img", "link", "col", "input"}


def el(tag: str, attrs: dict[str, Any] | None = None, *children: Child) -> Markup:
    """``<tag attrs>children</tag>`` with attribute values and text escaped.

    Attributes set to None or False are left out; True renders the bare name.
    A trailing underscore is dropped from names (``class_`` for ``class``).
    """
    parts = [tag]
    for name, value in (attrs or {}).items():
        if value is None or value is False:
            continue
        name = name.rstrip("_").replace("_", "-")
        if value is True:
            parts.append(name)
        else:
            parts.append(f'{name}="{escape(value)}"')
    opening = "<" + " ".join(parts) + ">"
    if tag in VOID:
        return Markup(opening)
    return Markup(f"{opening}{_children(children)}</{tag}>")


def breakable(text: Any) -> Markup:
    """Text with a line-break opportunity after each - _ @ + / or . (not a decimal
    point), so a narrow column header wraps between the parts of a name
    ('minilm.vectors-' 'binary', 'ndcg@' '10') instead of inside a word ('minil' 'm')."""
    if isinstance(text, Markup):
        return text
    parts = re.split(r"(?<=[\-_@+/])(?=.)|(?<=\.)(?=\D)", str(text))  # not in 0.01
    return Markup("<wbr>".join(escape(p) for p in parts))


def join(*children: Child) -> Markup:
    """Children concatenated (strings escaped) without a wrapping element."""
    return Markup(_children(children))
