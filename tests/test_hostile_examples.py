"""Hostile inputs, one example per class: numeric-looking ids, BOMs, CRLF and lone CR,
tabs inside fields, NUL bytes, invalid UTF-8, lone surrogates, huge numbers, 1 MB
fields, emoji and right-to-left text, unreadable paths. Each either loads exactly or
gives a one-line, located TrawlError (the properties are in test_hostile_inputs.py).
"""

from __future__ import annotations

import csv
import json
import re

import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from trawl.catalogue import load_catalogue
from trawl.errors import TrawlError
from trawl.judgments import read_qrels
from trawl.queries import read_queries
from trawl.runs import read_run

from .conftest import invoke

BOM = "\ufeff"
MB = 1 << 20

NUMERIC_LOOKING = ["007", "0", "00", "1e3", "1.50", "-0", "+7", "0x1F", "٠٠٧", "1_000", "inf",
                   "NaN", "3.0"]


@pytest.mark.parametrize("fmt", ["jsonl", "csv", "parquet"])
def test_numeric_looking_ids_stay_text_in_every_catalogue_format(tmp_path, fmt):
    items = [{"id": i, "type": "faq", "title": f"item {i}", "related": "007"}
             for i in NUMERIC_LOOKING]
    path = tmp_path / f"c.{fmt}"
    if fmt == "jsonl":
        path.write_text("".join(json.dumps(r) + "\n" for r in items))
    elif fmt == "csv":
        path.write_text("id,type,title,related\n"
                        + "".join(f"{r['id']},faq,{r['title']},007\n" for r in items))
    else:
        pq.write_table(pa.Table.from_pylist(items), path)
    cat = load_catalogue(path)
    assert cat.ids == NUMERIC_LOOKING
    assert cat.by_id["1e3"].related == ("007",)


def test_numeric_looking_ids_stay_text_in_queries_qrels_and_runs(tmp_path):
    ids = NUMERIC_LOOKING
    (tmp_path / "q.tsv").write_text("".join(f"{i}\tquery {i}\n" for i in ids))
    (tmp_path / "j.qrels").write_text("".join(f"{i} 0 {i} 1\n" for i in ids))
    (tmp_path / "r.run").write_text("".join(f"{i} Q0 {i} 1 1.0 r\n" for i in ids))
    assert list(read_queries(tmp_path / "q.tsv")) == ids
    assert list(read_qrels(tmp_path / "j.qrels")) == ids
    assert all(read_qrels(tmp_path / "j.qrels")[i] == {i: 1} for i in ids)
    assert read_run(tmp_path / "r.run").results["007"] == (("007", 1.0),)


def test_bom_crlf_and_blank_lines_change_nothing(tmp_path):
    rows = [{"id": "a", "type": "faq", "title": "Lost property", "text": "Call the depot."},
            {"id": "b", "type": "form", "title": "Refund", "text": "Ask for a refund."}]
    plain_text = "".join(json.dumps(r) + "\n" for r in rows)
    hostile = BOM + "\r\n\r\n" + plain_text.replace("\n", "\r\n\r\n   \r\n")
    (tmp_path / "a.jsonl").write_text(plain_text)
    (tmp_path / "b.jsonl").write_bytes(hostile.encode())
    a, b = load_catalogue(tmp_path / "a.jsonl"), load_catalogue(tmp_path / "b.jsonl")
    assert a.items == b.items and a.fingerprint == b.fingerprint
    assert [it.line for it in b.items] == [3, 6]  # blank lines still count
    for name, text in [("q.tsv", "q1\tlost wallet\n"), ("j.qrels", "q1 0 a 2\n"),
                       ("r.run", "q1 Q0 a 1 0.9 r\n")]:
        (tmp_path / name).write_bytes((BOM + text.replace("\n", "\r\n") + "\r\n").encode())
    assert read_queries(tmp_path / "q.tsv") == {"q1": "lost wallet"}
    assert read_qrels(tmp_path / "j.qrels") == {"q1": {"a": 2}}
    assert read_run(tmp_path / "r.run").results == {"q1": (("a", 0.9),)}


def test_tabs_inside_fields(tmp_path):
    (tmp_path / "c.jsonl").write_text(json.dumps(
        {"id": "a", "type": "faq", "title": "Fares\tand passes", "text": "col1\tcol2"}) + "\n")
    (tmp_path / "c.csv").write_text('id,type,title,text\na,faq,"Fares\tand passes",col1\tcol2\n')
    for name in ("c.jsonl", "c.csv"):
        item = load_catalogue(tmp_path / name).items[0]
        assert (item.title, item.text) == ("Fares\tand passes", "col1\tcol2")
    (tmp_path / "q.tsv").write_text("q1\tfare\tcapping\trules\n")  # later tabs are spaces
    assert read_queries(tmp_path / "q.tsv") == {"q1": "fare capping rules"}


@pytest.mark.parametrize("name,content,message", [
    ("c.csv", "id,type,title\na,faq,ok\nb,faq,bad\x00\n",
     "3: NUL byte in CSV data; the file is binary or corrupt"),
    ("q.tsv", "q1\tok\nq2\tbad\x00\n", "2: NUL byte in line; the file is binary or corrupt"),
    ("j.qrels", "q1 0 a 1\nq1 0 b\x00 1\n", "2: NUL byte in line; the file is binary or corrupt"),
    ("r.run", "q1 Q0 a 1 0.5 r\nq1 Q0 b\x00 2 0.4 r\n",
     "2: NUL byte in line; the file is binary or corrupt"),
])
def test_nul_bytes_are_located_errors(tmp_path, name, content, message):
    path = tmp_path / name
    path.write_bytes(content.encode())
    reader = {"c.csv": load_catalogue, "q.tsv": read_queries, "j.qrels": read_qrels,
              "r.run": read_run}[name]
    with pytest.raises(TrawlError) as exc:
        reader(path)
    assert str(exc.value) == f"{path}:{message}"


def test_nul_escaped_inside_json_is_text(tmp_path):
    # JSON may carry U+0000 escaped; it is text, not a corrupt file.
    (tmp_path / "c.jsonl").write_text('{"id": "a", "type": "faq", "title": "a\\u0000b"}\n')
    assert load_catalogue(tmp_path / "c.jsonl").items[0].title == "a\x00b"


@pytest.mark.parametrize("raw,line", [(b"q1\tok\rq2\tcaf\xe9\r", 2),
                                      (b"q1\tok\r\nq2\tok\r\nq3\t\xff\r\n", 3),
                                      (b"\xef\xbb\xbfq1\t\xc3\n", 1)])
def test_invalid_utf8_names_the_line_whatever_the_line_ends(tmp_path, raw, line):
    path = tmp_path / "q.tsv"
    path.write_bytes(raw)
    with pytest.raises(TrawlError, match=rf"^{re.escape(str(path))}:{line}: not valid UTF-8"):
        read_queries(path)


def test_lone_surrogate_escape_is_a_located_error(tmp_path):
    path = tmp_path / "c.jsonl"
    path.write_text('{"id": "a", "type": "faq", "title": "ok \\ud83d\\ude00"}\n'  # a pair: fine
                    '{"id": "b", "type": "faq", "title": "bad \\ud800 half"}\n')
    result = invoke(["check", path, "--lengths", "words"])
    assert result.exit_code == 2
    assert result.stderr == (f"error: {path}:2: title: contains an unpaired surrogate escape "
                             "(\\ud800); it is not text; re-export the file as UTF-8\n")


def test_huge_numbers_and_deep_nesting_are_located_errors(tmp_path):
    path = tmp_path / "c.jsonl"
    path.write_text('{"id": "a", "type": "faq", "title": "ok"}\n{"id": ' + "1" * 5000 + "}\n")
    with pytest.raises(TrawlError, match=r":2: malformed JSON: a number has more than \d+ "
                                         r"digits; write long ids as strings"):
        load_catalogue(path)
    path = tmp_path / "c.csv"
    path.write_text('id,type,title,related\na,faq,ok,"' + "[" * 100_000 + '"\n')
    with pytest.raises(TrawlError, match=":2: related: malformed JSON list: nested too deeply"):
        load_catalogue(path)


@pytest.mark.parametrize("fmt", ["jsonl", "csv", "parquet"])
def test_one_megabyte_fields_load_whole(tmp_path, fmt):
    big = ("Fares and passes 😀 مرحبا " * (MB // 20))[:MB]
    rows = [{"id": "big", "type": "article", "title": "Long", "text": big},
            {"id": "small", "type": "faq", "title": "Short", "text": "x"}]
    path = tmp_path / f"c.{fmt}"
    if fmt == "jsonl":
        path.write_text("".join(json.dumps(r, ensure_ascii=False) + "\n" for r in rows))
    elif fmt == "csv":
        with path.open("w", newline="", encoding="utf-8") as fh:
            w = csv.DictWriter(fh, ["id", "type", "title", "text"])
            w.writeheader()
            w.writerows(rows)
    else:
        pq.write_table(pa.Table.from_pylist(rows), path)
    cat = load_catalogue(path)
    assert len(cat.by_id["big"].text) == len(big.strip())


def test_one_megabyte_query_and_ids(tmp_path):
    long_id = "d" * MB
    (tmp_path / "q.tsv").write_text("q1\t" + "where is my bus " * (MB // 16) + "\n")
    (tmp_path / "j.qrels").write_text(f"q1 0 {long_id} 1\n")
    (tmp_path / "r.run").write_text(f"q1 Q0 {long_id} 1 0.5 r\n")
    assert len(read_queries(tmp_path / "q.tsv")["q1"]) == MB - 1  # trailing space dropped
    assert read_qrels(tmp_path / "j.qrels") == {"q1": {long_id: 1}}
    assert read_run(tmp_path / "r.run").results["q1"][0][0] == long_id


def test_emoji_and_right_to_left_text_pass_through_check(tmp_path):
    rows = [{"id": "rtl-1", "type": "faq", "title": "שלום עולם \u202e reversed",
             "text": "مرحبا بالعالم"},
            {"id": "emoji-😀", "type": "screen", "title": "Tickets 🎟️ 👩‍👩‍👧", "text": "family pass"}]
    path = tmp_path / "c.jsonl"
    path.write_text("".join(json.dumps(r, ensure_ascii=False) + "\n" for r in rows))
    cat = load_catalogue(path)
    assert cat.by_id["emoji-😀"].title == "Tickets 🎟️ 👩‍👩‍👧"
    result = invoke(["check", path, "--json"])  # through the real tokenizer
    assert result.exit_code == 0
    assert json.loads(result.stdout)["types"] == {"faq": 1, "screen": 1}


def test_unreadable_paths_are_clean_errors(tmp_path):
    (tmp_path / "dir.jsonl").mkdir()
    with pytest.raises(TrawlError, match="catalogue is a folder, expected a file$"):
        load_catalogue(tmp_path / "dir.jsonl")
    too_long = tmp_path / ("x" * 300 + ".jsonl")  # longer than any file name may be
    result = invoke(["check", too_long])
    assert result.exit_code == 2
    assert result.stderr.startswith(f"error: {too_long}: cannot read catalogue: ")
    assert len(result.stderr.splitlines()) == 1
