"""Question / task style: a natural question for informational items, a task phrasing
("where do I...", "how do I...") for screens and forms.

Destination types are free strings, so a type is read as a *task* destination when its
name contains one of TASK_HINTS (screen, form, page, settings, ...); everything else is
informational. The topic words come from the title or the keyword style's salience ranking.
"""

from __future__ import annotations

import random

from ..catalogue import Item
from .corpus import Corpus
from .keyword import salient_terms, title_phrase

SCREEN_HINTS = ("screen", "page", "view", "tab", "settings", "dashboard", "menu", "app")
FORM_HINTS = ("form", "request", "application", "claim", "report", "booking", "wizard")

INFORMATIONAL = (
    "what is {t}", "what are {t}", "how does {t} work", "why {t}", "what about {t}",
    "{t}?", "can i {t}", "is there {t}", "how do {t}", "when {t}",
)
SCREEN = (
    "where do i find {t}", "where is {t}", "open {t}", "show my {t}", "go to {t}",
    "where can i see {t}", "{t} in the app", "check my {t}",
)
FORM = (
    "how do i request {t}", "how do i apply for {t}", "apply for {t}", "report {t}",
    "i want to {t}", "submit {t}", "request {t}", "how can i get {t}",
)


TITLE_SHARE = 0.5  # half the questions are about the title's topic, half about salient details


def destination_kind(type_name: str) -> str:
    """'screen', 'form' or 'info' for a free-text destination type."""
    t = type_name.lower()
    if any(h in t for h in FORM_HINTS):
        return "form"
    if any(h in t for h in SCREEN_HINTS):
        return "screen"
    return "info"


TEMPLATES = {"info": INFORMATIONAL, "screen": SCREEN, "form": FORM}


def question_query(item: Item, corpus: Corpus, rng: random.Random) -> str:
    terms = (title_phrase(item, corpus, rng) if rng.random() < TITLE_SHARE
             else salient_terms(item, corpus, rng, n=rng.choice((1, 2, 2, 3))))
    if not terms:
        return ""
    template = rng.choice(TEMPLATES[destination_kind(item.type)])
    return template.format(t=" ".join(terms))
