"""How an item becomes the text it is embedded (and BM25-indexed) with.

A template is a ``str.format`` pattern over item fields. A field that only some items
have renders empty, so one template serves items of every type; a field that *no* item
has is a mistake (a misspelling, or a text column under another name) that would
silently index titles alone, so the catalogue refuses it and names the nearest field.
"""

from __future__ import annotations

import difflib
import string
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Protocol

from .errors import CatalogueError, UsageError

DEFAULT_TEMPLATE = "{title}\n{text}"
# common practice, no source: a field averaging 5+ words per item holds prose, not a
# code, date or name, so it is worth offering as the text to index
TEXT_LIKE_WORDS = 5
_OPTIONAL = ("text", "deeplink", "related", "tags")  # fields every item has, maybe empty


class _HasFields(Protocol):
    def fields(self) -> dict[str, Any]: ...


class _Missing(dict):
    def __missing__(self, key: str) -> str:
        return ""


@dataclass(frozen=True)
class TextTemplate:
    """A ``str.format`` pattern over item fields; surrounding blank lines are stripped."""

    pattern: str = DEFAULT_TEMPLATE

    def __post_init__(self) -> None:
        try:
            names = [f for _, f, _, _ in string.Formatter().parse(self.pattern) if f is not None]
        except ValueError as exc:
            raise UsageError(f"text template {self.pattern!r} is not valid: {exc}") from None
        for name in names:
            if not name.isidentifier():
                raise UsageError(
                    f"text template {self.pattern!r}: field {{{name}}} must be a plain field "
                    "name such as {title}, {text}, {type} or a metadata field")
        if not names:
            raise UsageError(f"text template {self.pattern!r} uses no fields; "
                             "use e.g. '{title}\\n{text}'")

    @property
    def names(self) -> tuple[str, ...]:
        """The fields the pattern uses, in order of first use."""
        found = [f for _, f, _, _ in string.Formatter().parse(self.pattern) if f]
        return tuple(dict.fromkeys(found))

    def render(self, item: _HasFields) -> str:
        text = self.pattern.format_map(_Missing(item.fields()))
        return "\n".join(line.strip() for line in text.strip().splitlines() if line.strip())


def check_template(template: TextTemplate, records: Sequence[Mapping[str, Any]],
                   path: str | Path) -> None:
    """Refuse a template naming a field no item fills; suggest the field meant.

    ``records`` are the items' fields (``Item.fields()``). Under the default template a
    catalogue whose text sits in another column (``body``, ``content``) is refused too,
    naming that column, unless no column holds text at all (a titles-only catalogue).
    """
    filled = _filled_fields(records)
    for name in template.names:
        if name in filled:
            continue
        if name == "text" and template.pattern == DEFAULT_TEMPLATE:
            prose = _text_like(records, filled)
            if prose is None:
                continue  # titles only, and nothing else to offer
            field, words = prose
            raise CatalogueError(
                path, f"no item has a 'text' field, so only titles would be indexed; field "
                f"{field!r} holds text ({words:.0f} words per item on average): use the text "
                f"template {'{title}' + chr(10) + '{' + field + '}'!r}")
        raise UsageError(f"text template {template.pattern!r}: no item in {path} has a field "
                         f"{name!r}{_nearest(name, filled)}")


def _filled_fields(records: Sequence[Mapping[str, Any]]) -> list[str]:
    """Fields at least one item fills, in first-seen order (empty optional ones left out)."""
    seen: dict[str, None] = {}
    for rec in records:
        for key, value in rec.items():
            if key in seen or (key in _OPTIONAL and value in ("", None)):
                continue
            seen[key] = None
    return list(seen)


def _text_like(records: Sequence[Mapping[str, Any]],
               filled: Sequence[str]) -> tuple[str, float] | None:
    """The metadata field with the most words per item, if it reads like prose."""
    best: tuple[str, float] | None = None
    for name in filled:
        if name in ("id", "type", "title", "deeplink", "related", "tags"):
            continue
        words = sum(len(v.split()) for r in records if isinstance(v := r.get(name), str))
        mean = words / max(len(records), 1)
        if mean >= TEXT_LIKE_WORDS and (best is None or mean > best[1]):
            best = (name, mean)
    return best


def _nearest(name: str, fields: Sequence[str]) -> str:
    """'; did you mean {body}? (fields items have: ...)', at most a dozen fields named."""
    close = difflib.get_close_matches(name, fields, n=1, cutoff=0.6)
    hint = f"; did you mean {{{close[0]}}}?" if close else ""
    shown = ", ".join(fields[:12]) + (", ..." if len(fields) > 12 else "")
    return f"{hint} (fields items have: {shown})"
