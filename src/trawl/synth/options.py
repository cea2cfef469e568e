"""What the command line hands to ``synthesise``, built from plain values: the chat
client for the llm style and the WordNet to reword with.

Kept apart from compose.py so every front end builds these the same way.
"""

from __future__ import annotations

import os
from pathlib import Path

from ..errors import UsageError
from .llm import LlmClient, PromptScrubber, keep_text
from .wordnet import WordNet, load_wordnet


def llm_client(url: str | None, model: str | None, *, key_env: str | None = None,
               timeout: float = 30.0, retries: int = 3, examples: tuple[str, ...] = (),
               scrub: bool = True) -> LlmClient | None:
    """A chat client for the llm style (None without a server): the API key comes from
    the environment variable ``key_env``; prompts are scrubbed of personal data unless
    ``scrub`` is False."""
    if url is None or model is None:
        return None
    return LlmClient(url, model, api_key=os.environ.get(key_env) or None if key_env else None,
                     timeout=timeout, retries=retries, examples=examples,
                     redact=PromptScrubber() if scrub else keep_text)


def wordnet_from(folder: str | Path | None) -> WordNet | str:
    """The WordNet in ``folder``, or "auto" (look in the usual places when a style needs
    it) when no folder is given."""
    if folder is None:
        return "auto"
    wordnet = load_wordnet(folder)
    if wordnet is None:
        raise UsageError(f"WordNet folder {folder}: no WordNet index.noun/data.noun there; "
                         "give the folder of a WordNet 3.0 dict")
    return wordnet
