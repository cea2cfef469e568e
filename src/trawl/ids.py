"""The one rule every id (item id, query id) follows: not empty, no white space.

TREC qrels and run files separate their fields with white space, so an id holding any
(or none at all) could not be written to them and read back as the same id. Readers of
those files get the rule for free from splitting lines; everything else checks it here.
"""

from __future__ import annotations


def is_valid_id(text: str) -> bool:
    """True when ``text`` can stand as one field of a qrels or run line."""
    return bool(text) and not any(c.isspace() for c in text)
