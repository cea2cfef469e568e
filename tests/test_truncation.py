"""Items and queries longer than the encoder's window are counted and reported.

Reference for the count: the Hugging Face transformers tokenizer of the bundled model
folder (AutoTokenizer, no truncation) and its sentence-transformers setting
max_seq_length = 256 (sentence_bert_config.json); a text is cut when its token count,
[CLS] and [SEP] included, exceeds it. Before, nothing said that a long item was
searched by its opening only.
"""

from __future__ import annotations

import pytest

from trawl.catalogue import Catalogue, Item
from trawl.index import build_index, open_index
from trawl.latency import measure_search
from trawl.report import text
from trawl.retrievers.spec import parse_spec
from trawl.window import count_truncated

from .retrieval_fakes import FakeLoader

LONG = " ".join(f"timetable{i} change" for i in range(150))  # well over 256 tokens
EDGE = " ".join(["fare"] * 254)                                # 254 + [CLS] + [SEP] = 256
OVER = " ".join(["fare"] * 255)                                # 257 tokens


def test_count_matches_the_transformers_tokenizer():
    transformers = pytest.importorskip("transformers")
    from trawl.bundled import model_path

    texts = ["late fees", LONG, EDGE, OVER, "refund for a delayed train " * 60]
    ref = transformers.AutoTokenizer.from_pretrained(str(model_path()))
    want = sum(1 for t in texts if len(ref(t, truncation=False)["input_ids"]) > 256)
    got = count_truncated(texts, parse_spec("minilm"))
    assert (got.over, got.total, got.window) == (want, 5, 256)
    assert want == 3  # LONG, OVER and the repeated sentence; EDGE just fits


def test_bm25_has_no_window():
    assert count_truncated([LONG], parse_spec("bm25")) is None


def test_index_and_search_report_what_was_cut(tmp_path):
    items = (Item("short", "faq", "Late fees"), Item("long", "article", "Timetables", LONG))
    cat = Catalogue("c.jsonl", items)
    info = build_index(cat, "minilm", tmp_path / "idx", cache_dir=tmp_path / "c", quiet=True,
                       loader=FakeLoader())
    assert info.items_over_window == {"over": 1, "total": 2, "window": 256}
    assert text.index_built(info.as_dict()).endswith(
        "\nwarning: 1 of 2 items are longer than the encoder's window of 256 tokens; only "
        "their first 256 tokens are embedded")
    index = open_index(tmp_path / "idx", cat, loader=FakeLoader())
    _, report = measure_search(index, {"q1": "late fees", "q2": OVER}, k=2, warmup=0)
    assert report.queries_over_window == {"over": 1, "total": 2, "window": 256}
    shown = text.search({**report.as_dict(), "run": "r.run", "latency_file": "r.lat"}, 2)
    assert ("warning: 1 of 2 queries are longer than the encoder's window of 256 tokens; "
            "only their first 256 tokens are embedded") in shown.splitlines()


def test_eval_warns_about_cut_items_and_queries_on_screen_and_in_results(tmp_path):
    import json

    from .conftest import invoke

    (tmp_path / "cat.jsonl").write_text(
        json.dumps({"id": "a", "type": "faq", "title": "Late fees"}) + "\n"
        + json.dumps({"id": "b", "type": "article", "title": "Timetables", "text": LONG}) + "\n")
    (tmp_path / "q.tsv").write_text(f"q1\tlate fees\nq2\t{OVER}\n")
    (tmp_path / "q.qrels").write_text("q1 0 a 1\nq2 0 b 1\n")
    res = invoke(["eval", tmp_path / "cat.jsonl", tmp_path / "q.tsv", tmp_path / "q.qrels",
                  "-e", "minilm", "-o", tmp_path / "out", "--cache-dir", tmp_path / "c",
                  "--results", "2", "-q"])
    assert res.exit_code == 0, res.output
    want = ["minilm: 1 of 2 items are longer than the encoder's window of 256 tokens; only "
            "their first 256 tokens are embedded",
            "minilm: 1 of 2 queries are longer than the encoder's window of 256 tokens; only "
            "their first 256 tokens are embedded"]
    warnings = json.loads((tmp_path / "out" / "results.json").read_text()
                          )["evaluations"][0]["warnings"]
    for w in want:
        assert w in warnings and f"warning: {w}" in res.stdout
