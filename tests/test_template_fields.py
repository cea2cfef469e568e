"""Templates that name fields no item has, text under another column name, and the
Python-form lists a pandas-written CSV holds: each stops with a one-line fix or loads."""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
import pytest

from trawl.catalogue import check_catalogue, load_catalogue
from trawl.errors import CatalogueError, UsageError

from .conftest import DEMO_CATALOGUE, invoke


def demo_rows() -> list[dict]:
    return [json.loads(line) for line in DEMO_CATALOGUE.read_text().splitlines() if line]


def write_jsonl(path: Path, rows: list[dict]) -> Path:
    path.write_text("".join(json.dumps(r) + "\n" for r in rows))
    return path


@pytest.fixture
def body_catalogue(tmp_path) -> Path:
    """The demo catalogue with its text column renamed to ``body``."""
    rows = demo_rows()
    for r in rows:
        r["body"] = r.pop("text", "")
    return write_jsonl(tmp_path / "body.jsonl", rows)


def test_misspelt_field_names_the_nearest_one():
    with pytest.raises(UsageError, match=r"has a field 'txt'; did you mean \{text\}\?"):
        load_catalogue(DEMO_CATALOGUE, template="{title} {txt}")


def test_misspelt_field_stops_index_with_exit_2(tmp_path):
    result = invoke(["check", DEMO_CATALOGUE, "--template", "{title} {bodyy}"])
    assert result.exit_code == 2
    line = result.stderr.strip()
    assert "\n" not in line and "field 'bodyy'" in line and "fields items have: id, type" in line


def test_text_under_another_name_is_refused_with_the_template_to_use(body_catalogue):
    with pytest.raises(CatalogueError) as exc:
        load_catalogue(body_catalogue)
    msg = str(exc.value)
    assert "no item has a 'text' field" in msg and "field 'body' holds text" in msg
    assert msg.endswith("use the text template '{title}\\n{body}'")


def test_right_template_loads_and_check_has_no_false_near_empty_warnings(body_catalogue):
    """With the template mapping body, `check` counts the same words as for the original."""
    original = check_catalogue(load_catalogue(DEMO_CATALOGUE), unit="words")
    mapped = check_catalogue(load_catalogue(body_catalogue, "{title}\n{body}"), unit="words")
    near = [w for w in mapped.warnings if "near-empty" in w]
    assert len(near) == sum("near-empty" in w for w in original.warnings) < 5
    assert mapped.length_percentiles == original.length_percentiles


def test_titles_only_catalogue_still_loads(tmp_path):
    """No text column and nothing text-like to offer: titles are all there is."""
    path = write_jsonl(tmp_path / "t.jsonl", [
        {"id": "a", "type": "screen", "title": "Settings", "code": "S1"},
        {"id": "b", "type": "screen", "title": "My tickets", "code": "S2"}])
    assert load_catalogue(path).texts() == ["Settings", "My tickets"]


def test_field_some_items_have_is_fine(tmp_path):
    path = write_jsonl(tmp_path / "m.jsonl", [
        {"id": "a", "type": "faq", "title": "Lost card", "text": "Report it.", "branch": "X"},
        {"id": "b", "type": "faq", "title": "Refunds", "text": "Ask us."}])
    assert load_catalogue(path, "{title} {branch}").texts() == ["Lost card X", "Refunds"]


def test_with_template_checks_fields_too():
    with pytest.raises(UsageError, match="field 'titel'; did you mean {title}"):
        load_catalogue(DEMO_CATALOGUE).with_template("{titel}")


def test_pandas_to_csv_catalogue_reads_like_the_jsonl(tmp_path):
    """pandas (reference writer) writes list cells in Python form and a nameless index
    column; the catalogue it writes must equal the JSONL it came from."""
    df = pd.DataFrame(demo_rows())
    df.to_csv(tmp_path / "with_index.csv")
    df.to_csv(tmp_path / "no_index.csv", index=False)
    want = load_catalogue(DEMO_CATALOGUE)
    for name in ("with_index.csv", "no_index.csv"):
        got = load_catalogue(tmp_path / name)
        assert got.fingerprint == want.fingerprint
        assert got.items[0].related == want.items[0].related and got.items[0].related


@pytest.mark.parametrize("cell", ["[__import__('os').system('touch pwned')]",
                                  "['a', open('x')]", "['a', ['b']]", "[1.5, 'a']"])
def test_python_form_cells_are_parsed_never_evaluated(tmp_path, cell, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path = tmp_path / "c.csv"
    pd.DataFrame([{"id": "a", "type": "faq", "title": "T", "text": "x", "tags": cell}]).to_csv(
        path, index=False)
    with pytest.raises(CatalogueError, match=r"c.csv:2: tags: malformed JSON list"):
        load_catalogue(path)
    assert not (tmp_path / "pwned").exists()
