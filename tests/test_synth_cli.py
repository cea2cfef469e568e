"""`trawl synth` end to end: files, table, JSON, determinism, bad input and flag conflicts."""

from __future__ import annotations

import json

import pytest

from .conftest import invoke

ITEMS = [
    {"id": "art-1", "type": "article", "title": "Renewing borrowed books",
     "text": "Renew loans online before the due date. Each renewal adds three weeks.",
     "related": ["scr-1"]},
    {"id": "art-2", "type": "article", "title": "Overdue fines",
     "text": "Fines build up daily for overdue items. Pay fines at the desk or online."},
    {"id": "scr-1", "type": "screen", "title": "My loans",
     "text": "Lists your current loans, due dates and renewals."},
    {"id": "frm-1", "type": "form", "title": "Suggest a purchase",
     "text": "Ask the library to buy a book or film that is missing from the catalogue."},
]


@pytest.fixture
def catalogue(tmp_path):
    path = tmp_path / "library.jsonl"
    path.write_text("".join(json.dumps(r) + "\n" for r in ITEMS))
    return path


def _run(catalogue, out, *extra):
    return invoke(["synth", catalogue, "-o", out, "--styles", "keyword,question,typo",
                   "--max-overlap", "1", "-n", "3", "-q", *extra])


def test_writes_three_files_and_prints_table(catalogue, tmp_path):
    res = _run(catalogue, tmp_path / "s")
    assert res.exit_code == 0, res.output
    lines = res.stdout.splitlines()
    assert lines[0].endswith("near-duplicates merged)")
    assert lines[2].split() == ["style", "type", "queries", "words", "overlap", "dropped"]
    assert "Silver judgments are estimates" in res.stdout
    # the mean overlap may exceed the ceiling: say which queries it binds
    assert "ceiling 1.0 on queries of more than 3 content words" in res.stdout
    queries = (tmp_path / "s.queries.tsv").read_text().splitlines()
    qrels = (tmp_path / "s.qrels").read_text().splitlines()
    prov = [json.loads(x) for x in (tmp_path / "s.jsonl").read_text().splitlines()]
    assert len(queries) == len(prov) == int(lines[0].split()[0])
    assert {q.split("\t")[0] for q in queries} == {p["qid"] for p in prov} \
        == {r.split()[0] for r in qrels}
    assert all(r.split()[1] == "0" and r.split()[3] in {"1", "2"} for r in qrels)


def test_same_seed_same_bytes_other_seed_other_bytes(catalogue, tmp_path):
    for name, seed in (("a", "4"), ("b", "4"), ("c", "5")):
        assert _run(catalogue, tmp_path / name, "--seed", seed).exit_code == 0
    for ext in (".queries.tsv", ".qrels", ".jsonl"):
        assert (tmp_path / f"a{ext}").read_bytes() == (tmp_path / f"b{ext}").read_bytes()
    assert (tmp_path / "a.queries.tsv").read_bytes() != (tmp_path / "c.queries.tsv").read_bytes()


def test_json_summary(catalogue, tmp_path):
    res = _run(catalogue, tmp_path / "s", "--json")
    data = json.loads(res.stdout)
    assert data["items"] == 4 and data["per_item"] == 3
    assert sum(r["queries"] for r in data["rows"]) == data["queries"]
    assert data["files"][0].endswith("s.queries.tsv")


@pytest.mark.parametrize("args, message", [
    (["--styles", "keyword,shouting"], "error: unknown query style 'shouting'; choose from"),
    (["--llm-url", "http://127.0.0.1:9"], "error: --llm-url and --llm-model go together"),
    (["--styles", "llm"], "error: --llm-examples and the 'llm' style need --llm-url"),
    (["--check-depth", "5"], "error: --check-depth needs --check-with"),
    (["--max-overlap", "1.5"], "error: max overlap 1.5 must be in (0, 1]"),
    (["--lexicon", "nowhere.txt"], "error: nowhere.txt: lexicon file not found"),
])
def test_bad_options_exit_2_before_writing(catalogue, tmp_path, args, message):
    res = invoke(["synth", catalogue, "-o", tmp_path / "s", "-q", *args])
    assert res.exit_code == 2
    assert res.stderr.startswith(message)
    assert not list(tmp_path.glob("s.*"))


def test_empty_catalogue_and_wordless_items(tmp_path):
    empty = tmp_path / "empty.jsonl"
    empty.write_text("")
    res = invoke(["synth", empty, "-o", tmp_path / "s", "-q"])
    assert res.exit_code == 2 and res.stderr.startswith(f"error: {empty}: catalogue is empty")
    blank = tmp_path / "blank.jsonl"
    blank.write_text('{"id": "a", "type": "faq", "title": "The"}\n')
    res = invoke(["synth", blank, "-o", tmp_path / "s", "-q"])
    assert res.exit_code == 2
    assert res.stderr == f"error: {blank}: no item has any words to make queries from " \
                         "(titles and texts are empty or stop words only)\n"


def test_lexicon_line_error(catalogue, tmp_path):
    lex = tmp_path / "words.txt"
    lex.write_text("# ok\nrenew = extend\nfines\n")
    res = invoke(["synth", catalogue, "-o", tmp_path / "s", "-q", "--lexicon", lex])
    assert res.exit_code == 2
    assert res.stderr.startswith(f"error: {lex}:3: expected 'catalogue wording = everyday")
