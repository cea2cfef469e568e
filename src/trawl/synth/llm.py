"""LLM style: ask a chat-completions-compatible server the user runs
(``/v1/chat/completions``) for queries, prompted per destination type. Item text from the
catalogue is sent to that server.

Plain ``urllib``, no client package. Connection failures, time-outs, HTTP 429 and 5xx are
retried with exponential back-off; anything else, or running out of tries, raises
``LlmError`` naming the server, so nothing is written. The API key (if any) is sent as a
bearer token and never appears in messages or ``repr`` (nor do credentials or a query
string in the URL). ``redact`` is the hook through which item text and example queries
are cleaned before they leave the process: by default ``PromptScrubber``, which replaces
e-mail addresses, phone numbers, long digit runs and postcodes (``trawl.privacy``) and
counts what it replaced; ``keep_text`` sends text as it is.
"""

from __future__ import annotations

import json
import random
import re
import socket
import time
import urllib.error
import urllib.request
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from urllib.parse import urlsplit

from ..catalogue import Item
from ..errors import TrawlError
from ..privacy import KINDS, scrub
from .question import destination_kind

MAX_ITEM_CHARS = 1200  # enough for the gist; keeps prompts small for local models
RETRY_STATUS = (429, 500, 502, 503, 504)
KIND_ASK = {
    "info": "questions or keyword searches a person would type to find this information",
    "screen": "searches a person would type to get to this screen of the app, often "
              "phrased as a task ('where do I ...', 'change my ...')",
    "form": "searches a person would type when they want to do what this form does "
            "('how do I ...', 'request ...', 'cancel my ...')",
}
LIST_MARK = re.compile(r"^\s*(?:[-*\u2022]|\d+[.)]|q\d*[:.)])\s*", re.IGNORECASE)


class LlmError(TrawlError):
    """The chat-completions server could not be used."""


def keep_text(text: str) -> str:
    """The ``redact`` hook that sends text unchanged (scrubbing turned off)."""
    return text


class PromptScrubber:
    """The default ``redact`` hook: e-mail addresses, phone numbers, long digit runs and
    postcodes in item text and example queries are replaced by placeholders before they
    are sent; the rest of the catalogue text goes to the chat server as written.

    ``counts`` tallies replacements once per distinct text, so example queries sent
    with every prompt are counted once.
    """

    def __init__(self) -> None:
        self.counts = dict.fromkeys(KINDS, 0)
        self._seen: dict[str, str] = {}

    def __call__(self, text: str) -> str:
        if text not in self._seen:
            clean, counts = scrub(text)
            for kind, n in counts.items():
                self.counts[kind] += n
            self._seen[text] = clean
        return self._seen[text]


@dataclass(frozen=True)
class LlmClient:
    url: str
    model: str
    api_key: str | None = field(default=None, repr=False)
    per_call: int = 3
    examples: tuple[str, ...] = ()
    timeout: float = 30.0
    retries: int = 3
    backoff: float = 1.0
    temperature: float = 0.7
    redact: Callable[[str], str] = field(default_factory=PromptScrubber, compare=False)
    sleep: Callable[[float], None] = field(default=time.sleep, repr=False, compare=False)

    @property
    def endpoint(self) -> str:
        u = self.url.rstrip("/")
        if u.endswith("/chat/completions"):
            return u
        return u + ("/chat/completions" if u.endswith("/v1") else "/v1/chat/completions")

    @property
    def shown_endpoint(self) -> str:
        """The endpoint for messages: without user:password@ or a query string, which
        can carry credentials."""
        try:
            parts = urlsplit(self.endpoint)
            host = parts.hostname or ""
            port = f":{parts.port}" if parts.port else ""
        except ValueError:
            return "(the server URL given)"
        if not host:
            return "(the server URL given)"
        return f"{parts.scheme}://{host}{port}{parts.path}{'?...' if parts.query else ''}"

    def _hide(self, text: str) -> str:
        """``text`` with the key and any credentials or query from the URL masked."""
        try:
            parts = urlsplit(self.url)
            secrets = [self.api_key, parts.username, parts.password, parts.query]
        except ValueError:
            secrets = [self.api_key, self.url]
        for secret in secrets:
            if secret:
                text = text.replace(secret, "***")
        return text

    @property
    def scrubbed(self) -> dict[str, int] | None:
        """Personal data replaced in prompts so far, by kind; None when not scrubbing."""
        if isinstance(self.redact, PromptScrubber):
            return dict(self.redact.counts)
        return None

    def messages(self, item: Item) -> list[dict[str, str]]:
        kind = destination_kind(item.type)
        text = self.redact(item.text[:MAX_ITEM_CHARS])
        system = ("You write realistic search queries for an app's search box. People use "
                  "their own everyday words, rarely the exact wording of the page, and "
                  "queries are short. Answer with one query per line and nothing else.")
        shots = ""
        if self.examples:
            shots = "Real queries people typed in this app (for style only):\n" + \
                    "\n".join(self.redact(e) for e in self.examples) + "\n\n"
        user = (f"{shots}Destination type: {item.type}\nTitle: {self.redact(item.title)}\n"
                f"Text: {text}\n\nWrite {self.per_call} different {KIND_ASK[kind]}.")
        return [{"role": "system", "content": system}, {"role": "user", "content": user}]

    def queries_for(self, item: Item, rng: random.Random) -> list[str]:
        reply = self.chat(self.messages(item), seed=rng.randrange(2**31))
        return parse_reply(reply)

    def chat(self, messages: Sequence[dict[str, str]], seed: int = 0) -> str:
        body = json.dumps({"model": self.model, "messages": list(messages),
                           "temperature": self.temperature, "seed": seed}).encode()
        headers = {"Content-Type": "application/json"}
        if self.api_key:
            headers["Authorization"] = f"Bearer {self.api_key}"
        last = ""
        for attempt in range(self.retries + 1):
            if attempt:
                self.sleep(self.backoff * 2 ** (attempt - 1))
            try:
                req = urllib.request.Request(self.endpoint, data=body, headers=headers,
                                             method="POST")
                with urllib.request.urlopen(req, timeout=self.timeout) as resp:
                    payload = resp.read()
            except urllib.error.HTTPError as exc:
                last = f"HTTP {exc.code} {exc.reason}"
                if exc.code in RETRY_STATUS:
                    continue
                raise LlmError(f"chat server at {self.shown_endpoint} refused the request: "
                               f"{last}; check the model name and the server URL") from None
            except (urllib.error.URLError, socket.timeout, TimeoutError, ConnectionError) as exc:
                reason = getattr(exc, "reason", exc)
                last = ("timed out" if isinstance(reason, (socket.timeout, TimeoutError))
                        else self._hide(str(reason)))
                continue
            except ValueError:  # http.client.InvalidURL and friends
                raise LlmError(f"server URL {self.shown_endpoint} is not a usable http(s) URL; "
                               "give e.g. http://127.0.0.1:8080/v1") from None
            return _content(self.shown_endpoint, payload)
        raise LlmError(f"chat server at {self.shown_endpoint} unreachable after "
                       f"{self.retries + 1} tries ({last}); start it or fix the server URL")


def _content(endpoint: str, payload: bytes) -> str:
    try:
        data = json.loads(payload)
        content = data["choices"][0]["message"]["content"]
    except (ValueError, KeyError, IndexError, TypeError):
        raise LlmError(f"chat server at {endpoint} sent a reply that is not a chat completion "
                       "(expected choices[0].message.content)") from None
    if not isinstance(content, str):
        raise LlmError(f"chat server at {endpoint} sent non-text content")
    return content


def parse_reply(reply: str) -> list[str]:
    """One query per line; list markers, quotes and blank lines removed."""
    out = []
    for line in reply.splitlines():
        q = LIST_MARK.sub("", line).strip().strip("\"'\u201c\u201d").strip()
        if q and q not in out:
            out.append(" ".join(q.split()))
    return out
