"""Review sheets people send back: the formula guard, bad and contradictory sheets,
.xlsx workbooks, and a parser that never crashes.

All data is invented (a transit rider app; tests/review_world.py).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from trawl.catalogue import load_catalogue
from trawl.errors import InputError, UsageError
from trawl.review import COLUMNS, export_sheet, guard_cell, import_sheets, unguard_cell
from trawl.silver import read_styles

from .conftest import invoke
from .review_world import ITEMS, make_world


@pytest.fixture()
def world(tmp_path: Path) -> dict:
    return make_world(tmp_path)


# --- formula guard --------------------------------------------------------------------------

@pytest.mark.parametrize("text, guarded", [
    ("=1+1", "'=1+1"), ("+44", "'+44"), ("-x", "'-x"), ("@SUM(A1)", "'@SUM(A1)"),
    ("\tx", "'\tx"), ("\rx", "'\rx"), ("'=x", "''=x"), ("'x", "'x"), ("a=b", "a=b"), ("", ""),
])
def test_guard_follows_the_leading_character_rule(text, guarded):
    # OWASP CSV injection guidance: cells starting with = + - @ tab or CR get a ' prefix.
    assert guard_cell(text) == guarded
    assert unguard_cell(guarded) == text


@given(st.text())
def test_guard_round_trips_and_never_leaves_a_formula_start(text):
    g = guard_cell(text)
    assert unguard_cell(g) == text
    assert not g.startswith(("=", "+", "-", "@", "\t", "\r"))


# --- bad sheets -----------------------------------------------------------------------------

def _sheet(world, body: str, name: str = "bad.csv") -> Path:
    path = world["dir"] / name
    path.write_text(body, encoding="utf-8")
    return path


HEAD = "# grade scale: 0-2\nqid,item_id,reason,silver_grade,verdict\n"


@pytest.mark.parametrize("body, message", [
    ("qid,item,reason,silver_grade,verdict\ns1,kb-fares,silver,2,ok\n",
     "bad.csv:1: header: missing column 'item_id'; a review sheet needs columns qid, item_id, "
     "reason, silver_grade, verdict"),
    ("qid,item_id,reason,silver_grade,verdict,verdict\n",
     "bad.csv:1: header: column 'verdict' appears twice"),
    (HEAD + "s1,kb-fares,silver,2,maybe\n",
     "bad.csv:3: verdict: 'maybe' is not allowed; use ok, no, 0, 1, 2 or leave it blank"),
    (HEAD + "s1,kb-fares,silver,2,3\n", "bad.csv:3: verdict: '3' is not allowed"),
    (HEAD + "s1,kb-gone,silver,2,ok\n",
     "bad.csv:3: item_id: item 'kb-gone' is not in the catalogue"),
    (HEAD + "s1,7,silver,2,ok\n", "may have turned an id like '007' into a number"),
    (HEAD + "s1,kb-fares,silver,2,ok\ns1,faq-cap,silver,1,\ns1,kb-fares,silver,2,no\n",
     "bad.csv:5: duplicate row for query 's1', item 'kb-fares' (first on line 3)"),
    (HEAD + "s1,kb-fares,pooled,,ok\n", "bad.csv:3: verdict: 'ok' confirms a silver grade"),
    (HEAD + "s1,kb-fares,silver,high,ok\n", "bad.csv:3: silver_grade: 'high' is not a grade"),
    (HEAD + "s1,kb-fares,pooled,1,\n", "bad.csv:3: silver_grade: pooled rows have no"),
    (HEAD + "s1,kb-fares,guess,1,\n", "bad.csv:3: reason: 'guess' is not one of"),
    (HEAD + "s1,kb-fares,silver,1,,surprise\n", "bad.csv:3: 6 cells but the header names 5"),
    (HEAD + "s 1,kb-fares,silver,1,\n", "bad.csv:3: qid: query id 's 1'"),
    ("# notes only\n", "no header row"),
    (HEAD, "bad.csv: the sheet has a header but no rows"),
    (HEAD + 's1,"kb-fares\n', "malformed CSV"),
    (HEAD + "s1,kb-fares,silver,2,\x00\n", "NUL byte"),
])
def test_bad_sheets_give_one_located_error(world, body, message):
    path = _sheet(world, body)
    with pytest.raises(InputError) as exc:
        import_sheets([path], world["catalogue"])
    assert message in str(exc.value)
    assert "\n" not in str(exc.value)
    res = invoke(["review", "import", path, "-c", world["cat"], "-o", world["dir"] / "o.qrels"])
    assert res.exit_code == 2
    assert res.stderr.startswith("error: ") and message in res.stderr
    assert not (world["dir"] / "o.qrels").exists()


def test_sheets_that_contradict_each_other_are_rejected(world):
    a = _sheet(world, HEAD + "s1,kb-fares,silver,2,\n", "a.csv")
    b = _sheet(world, HEAD + "s1,kb-fares,silver,1,\n", "b.csv")
    with pytest.raises(InputError, match=r"b.csv:3: .*differs from .*a.csv:3"):
        import_sheets([a, b], world["catalogue"])
    with pytest.raises(UsageError, match="given twice"):
        import_sheets([a, a], world["catalogue"])


def test_without_notes_the_scale_is_the_largest_silver_grade(world):
    path = _sheet(world, "qid,item_id,reason,silver_grade,verdict\ns1,kb-fares,silver,2,2\n")
    assert import_sheets([path], world["catalogue"]).qrels == {"s1": {"kb-fares": 2}}
    path = _sheet(world, "qid,item_id,reason,silver_grade,verdict\ns1,kb-fares,silver,1,2\n")
    with pytest.raises(InputError, match="'2' is not allowed; use ok, no, 0, 1"):
        import_sheets([path], world["catalogue"])


def test_provenance_reader_is_defensive_but_locates_broken_lines(world, tmp_path):
    p = tmp_path / "p.jsonl"
    p.write_text('{"qid": "a", "style": "typo"}\n\n{"qid": 7}\n{"qid": "b", "style": 3}\n')
    assert read_styles(p) == {"a": "typo", "7": "", "b": ""}
    p.write_text('{"qid": "a"}\n{"qid": \n')
    with pytest.raises(InputError, match=r"p.jsonl:2: malformed JSON"):
        read_styles(p)
    p.write_text('{"style": "typo"}\n')
    with pytest.raises(InputError, match=r"p.jsonl:1: qid: missing"):
        read_styles(p)


# --- .xlsx ----------------------------------------------------------------------------------

def test_xlsx_sheet_has_a_verdict_drop_down_text_ids_and_stable_bytes(world):
    from openpyxl import load_workbook

    out = world["dir"] / "sheet.xlsx"
    export_sheet(world["qrels"], world["queries"], world["catalogue"], out)
    first = out.read_bytes()
    export_sheet(world["qrels"], world["queries"], world["catalogue"], out)
    assert out.read_bytes() == first
    ws = load_workbook(out).active
    (dv,) = ws.data_validations.dataValidation
    assert dv.type == "list" and dv.formula1 == '"ok,no,0,1,2"'
    assert str(dv.sqref) == "K5:K14"  # the verdict column of the 10 data rows
    assert [c.value for c in ws[4]] == list(COLUMNS)
    ids = [ws.cell(r, 4).value for r in range(5, 15)]
    assert "007" in ids and "'-frm-lost" in ids  # text, not a number; guarded like CSV
    assert all(ws.cell(r, c).data_type == "s" for r in range(5, 15) for c in (1, 4, 6))


def test_xlsx_filled_by_a_person_imports(world):
    from openpyxl import load_workbook

    out = world["dir"] / "sheet.xlsx"
    export_sheet(world["qrels"], world["queries"], world["catalogue"], out)
    assert import_sheets([out], world["catalogue"]).qrels == world["qrels"]
    wb = load_workbook(out)
    ws = wb.active
    for r in range(5, ws.max_row + 1):
        key = (ws.cell(r, 1).value, ws.cell(r, 4).value)
        if key == ("s1", "kb-fares"):
            ws.cell(r, 11).value = 1  # typed as a number, as people do
        if key == ("s2", "frm-refund"):
            ws.cell(r, 11).value = "no"
    wb.save(out)
    result = import_sheets([out], world["catalogue"])
    assert result.qrels["s1"]["kb-fares"] == 1 and result.qrels["s2"]["frm-refund"] == 0
    assert result.report.sheets[0].filled == 2


def test_broken_xlsx_gives_one_located_error(world):
    bad = world["dir"] / "bad.xlsx"
    bad.write_bytes(b"PK\x03\x04 not really a workbook")
    with pytest.raises(InputError, match=r"bad.xlsx: cannot read the .xlsx sheet"):
        import_sheets([bad], world["catalogue"])


# --- the parser never crashes -----------------------------------------------------------------

_PIECES = st.sampled_from(["qid", "item_id", "reason", "silver_grade", "verdict", "s1", "kb-fares",
                           "007", "silver", "pooled", "ok", "no", "2", "2.0", "-1", "'=x", '"',
                           ",", "\r\n", "\n", "\r", "\t", "#", "# grade scale: 0-2", "\x00",
                           "\ufeff", "é", "שלום", "🚌", " ", ""])


@pytest.fixture(scope="module")
def fuzz_catalogue(tmp_path_factory):
    path = tmp_path_factory.mktemp("cat") / "cat.jsonl"
    path.write_text("".join(json.dumps(it) + "\n" for it in ITEMS), encoding="utf-8")
    return load_catalogue(path)


@given(st.lists(_PIECES, max_size=60), st.booleans())
def test_any_sheet_text_loads_or_gives_an_input_error(tmp_path_factory, fuzz_catalogue,
                                                      pieces, header):
    path = tmp_path_factory.mktemp("fuzz") / "s.csv"
    head = "qid,item_id,reason,silver_grade,verdict\r\n" if header else ""
    path.write_bytes((head + "".join(pieces)).encode("utf-8"))
    try:
        import_sheets([path], fuzz_catalogue)
    except (InputError, UsageError) as exc:
        assert "\n" not in str(exc)

