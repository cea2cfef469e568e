"""The one rule every id (item id, query id) follows: not empty, no white space.

TREC qrels and run files separate their fields with white space, so an id holding any
(or none at all) could not be written to them and read back as the same id. Readers of
those files get the rule for free from splitting lines; everything else checks it here.
"""

from __future__ import annotations

from collections.abc import Sequence

EXAMPLES_SHOWN = 5


def is_valid_id(text: str) -> bool:
    """True when ``text`` can stand as one field of a qrels or run line."""
    return bool(text) and not any(c.isspace() for c in text)


def examples(ids: Sequence[str]) -> str:
    """``"q1, q2, q3"`` or ``"q1, q2, ... (12 in all)"``: the ids a message shows; an id
    with invisible or combining characters is shown escaped (``lookalike.shown``)."""
    from .lookalike import shown

    head = ", ".join(map(shown, ids[:EXAMPLES_SHOWN]))
    return head if len(ids) <= EXAMPLES_SHOWN else f"{head}, ... ({len(ids)} in all)"
