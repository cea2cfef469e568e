"""The chat-completions client against a tiny local HTTP server on 127.0.0.1.

This is a protocol check, not a language model: the server answers with canned text
so the tests can check requests, retries, time-outs and error paths.
"""

from __future__ import annotations

import json
import random
import threading
import time
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

import pytest

from trawl.catalogue import Catalogue, Item
from trawl.synth import LlmClient, LlmError, SynthSettings, synthesise
from trawl.synth.llm import parse_reply
from trawl.synth.overlap import OverlapProfile

from .conftest import invoke

ITEM = Item("frm-7", "form", "Suggest a purchase", "Ask us to buy a book we do not stock.")
REPLY = "1. get the library to buy a book\n2. request a new title\n- \"order a missing novel\"\n"


class _Server:
    """Serves a script of responses: (status, body, delay) per request, last one repeated."""

    def __init__(self, script):
        self.script, self.requests = list(script), []
        outer = self

        class Handler(BaseHTTPRequestHandler):
            def do_POST(self):  # noqa: N802 (http.server's naming)
                body = json.loads(self.rfile.read(int(self.headers["Content-Length"])))
                outer.requests.append((self.path, dict(self.headers), body))
                status, text, delay = outer.script[min(len(outer.requests),
                                                       len(outer.script)) - 1]
                time.sleep(delay)
                payload = text if isinstance(text, bytes) else json.dumps(
                    {"choices": [{"message": {"role": "assistant", "content": text}}]}).encode()
                try:
                    self.send_response(status)
                    self.send_header("Content-Type", "application/json")
                    self.send_header("Content-Length", str(len(payload)))
                    self.end_headers()
                    self.wfile.write(payload)
                except (BrokenPipeError, ConnectionResetError):
                    pass

            def log_message(self, *args):
                pass

        self.httpd = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
        self.url = f"http://127.0.0.1:{self.httpd.server_address[1]}"
        threading.Thread(target=self.httpd.serve_forever, daemon=True).start()

    def close(self):
        self.httpd.shutdown()
        self.httpd.server_close()


@pytest.fixture
def server(request):
    s = _Server(request.param)
    yield s
    s.close()


def _client(url, **kw):
    sleeps = []
    kw.setdefault("sleep", sleeps.append)
    return LlmClient(url, "tiny-test-model", **kw), sleeps


@pytest.mark.parametrize("server", [[(200, REPLY, 0)]], indirect=True)
def test_request_shape_and_parsed_queries(server):
    client, _ = _client(server.url, api_key="sk-secret-123", examples=("renew my books",))
    out = client.queries_for(ITEM, random.Random(0))
    assert out == ["get the library to buy a book", "request a new title",
                   "order a missing novel"]
    path, headers, body = server.requests[0]
    assert path == "/v1/chat/completions"
    assert headers["Authorization"] == "Bearer sk-secret-123"
    assert body["model"] == "tiny-test-model"
    assert [m["role"] for m in body["messages"]] == ["system", "user"]
    user = body["messages"][1]["content"]
    assert "Destination type: form" in user and "renew my books" in user
    assert "sk-secret" not in repr(client)


@pytest.mark.parametrize("server", [[(503, "busy", 0), (429, "slow down", 0), (200, REPLY, 0)]],
                         indirect=True)
def test_retries_with_exponential_backoff(server):
    client, sleeps = _client(server.url + "/v1", backoff=0.5)
    assert len(client.queries_for(ITEM, random.Random(0))) == 3
    assert len(server.requests) == 3
    assert sleeps == [0.5, 1.0]


@pytest.mark.parametrize("server", [[(400, b'{"error": "no such model"}', 0)]], indirect=True)
def test_client_error_is_not_retried(server):
    client, sleeps = _client(server.url, api_key="sk-secret-123")
    with pytest.raises(LlmError, match="refused the request: HTTP 400") as exc:
        client.chat([{"role": "user", "content": "hi"}])
    assert len(server.requests) == 1 and sleeps == []
    assert "sk-secret" not in str(exc.value)


@pytest.mark.parametrize("server", [[(200, REPLY, 1.0)]], indirect=True)
def test_timeout_then_clear_error(server):
    client, sleeps = _client(server.url, timeout=0.2, retries=1)
    with pytest.raises(LlmError, match=r"unreachable after 2 tries \(timed out\)"):
        client.chat([{"role": "user", "content": "hi"}])
    assert sleeps == [1.0]


@pytest.mark.parametrize("server", [[(200, b"<html>not json</html>", 0)]], indirect=True)
def test_reply_that_is_not_a_chat_completion(server):
    client, _ = _client(server.url)
    with pytest.raises(LlmError, match="not a chat completion"):
        client.chat([{"role": "user", "content": "hi"}])


def test_unreachable_server():
    s = _Server([(200, REPLY, 0)])
    url = s.url
    s.close()  # nothing listens on the port any more
    client, sleeps = _client(url, retries=2)
    with pytest.raises(LlmError, match=f"{url}/v1/chat/completions unreachable after 3 tries"):
        client.chat([{"role": "user", "content": "hi"}])
    assert len(sleeps) == 2


def test_parse_reply_strips_list_markers_and_quotes():
    assert parse_reply('Q1: "where is my card"\n\n* cancel my pass\n3) cancel my pass') == \
        ["where is my card", "cancel my pass"]


@pytest.mark.parametrize("server", [[(200, REPLY, 0)]], indirect=True)
def test_llm_style_in_synthesise_and_redaction_hook(server):
    client, _ = _client(server.url, redact=lambda t: t.replace("book", "[x]"))
    cat = Catalogue("t", (ITEM,))
    s = synthesise(cat, SynthSettings(styles="llm", profile=OverlapProfile((1.0,), 1.0)),
                   llm=client, quiet=True)
    assert list(s.queries.values())[0] in parse_reply(REPLY)
    assert s.provenance[0]["style"] == "llm"
    user = server.requests[0][2]["messages"][1]["content"]
    assert "[x]" in user and "book" not in user


def test_cli_llm_failure_writes_nothing(tmp_path):
    s = _Server([(500, "down", 0)])
    url = s.url
    s.close()
    cat = tmp_path / "c.jsonl"
    cat.write_text(json.dumps({"id": "a", "type": "form", "title": "Suggest a purchase",
                               "text": "Ask us to buy a book."}) + "\n")
    out = tmp_path / "out" / "s"
    res = invoke(["synth", cat, "-o", out, "--styles", "llm", "--llm-url", url,
                  "--llm-model", "m", "--llm-timeout", "0.5", "--llm-retries", "0", "-q"])
    assert res.exit_code == 2
    assert res.stderr.startswith(f"error: chat server at {url}/v1/chat/completions unreachable")
    assert not (tmp_path / "out").exists() or not any((tmp_path / "out").iterdir())
