"""Hostile inputs: every reader either loads a file or raises a one-line, located TrawlError.

Users feed trawl whatever their content system exports. Property tests (hypothesis) throw
byte-level mutations of plausible files at the catalogue (JSONL, CSV, Parquet), queries,
qrels and run readers and at `trawl check`; example tests pin each hostile input class
by name in test_hostile_examples.py.
"""

from __future__ import annotations

import csv
import io
import json
import re
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from trawl.catalogue import Catalogue, load_catalogue
from trawl.errors import TrawlError
from trawl.judgments import read_qrels, write_qrels
from trawl.lookalike import has_visible
from trawl.queries import read_queries, write_queries
from trawl.runs import make_run, read_run, write_run

from .conftest import invoke

SETTINGS = settings(max_examples=80, deadline=None,
                    suppress_health_check=[HealthCheck.function_scoped_fixture,
                                           HealthCheck.too_slow])
BOM = "\ufeff"

# --- building blocks -------------------------------------------------------------------------

HOSTILE_TEXT = [
    BOM, "\r\n", "\r", "\n", "\t", "\x00", " ", "\u00a0", "\u2028", "\x1c", "\x85",
    "\u202e",                      # right-to-left override
    "😀", "👩‍👩‍👧",                    # emoji, including a joined sequence
    "مرحبا بالعالم", "שלום עולם",     # right-to-left scripts
    "007", "٠٠٧", '"', "'", ",", "|", "{", "}", "[", "]", ":", "\\", "\\u0000",
    "\\ud800", "\\udc00", "\\ud83d\\ude00", "=SUM(A1)", "@cmd", "null", "true", "NaN",
    "Infinity", "1e999", "-0", "Q0", "0", "1", "id", "type", "title", "text", "related",
    "tags",
]
HOSTILE_BYTES = [b"\xff", b"\xc3", b"\xed\xa0\x80", b"\xef\xbb\xbf", b"\xe2\x82", b"\x00",
                 b"\xc0\x80"]
fragment = st.one_of(
    st.sampled_from(HOSTILE_TEXT).map(str.encode),
    st.sampled_from(HOSTILE_BYTES),
    st.text(max_size=8).map(str.encode),
    st.binary(max_size=6),
)
token = st.one_of(st.sampled_from(["007", "q1", "d1", "d2", "0", "1", "2", "-1", "1.5", "nan",
                                   "inf", "Q0", "run", "😀", "שלום"]),
                  st.text(max_size=6))
json_value = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats() | st.text(max_size=12),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=5), inner,
                                                                max_size=3),
    max_leaves=6)
id_pool = st.sampled_from(["a", "b", "007", "7", "x y", "😀", "", "مرحبا", " a", "a\tb"])
record = st.fixed_dictionaries({}, optional={
    "id": id_pool | json_value, "type": st.sampled_from(["faq", "form", " ", ""]) | json_value,
    "title": st.text(max_size=20) | json_value, "text": st.text(max_size=20) | json_value,
    "related": st.lists(id_pool, max_size=2) | json_value,
    "tags": st.lists(st.text(max_size=4), max_size=2) | json_value, "extra": json_value})


@st.composite
def jsonl_line(draw) -> str:
    if draw(st.integers(0, 4)) == 0:
        return "".join(draw(st.lists(st.sampled_from(HOSTILE_TEXT), max_size=6)))
    return json.dumps(draw(record), ensure_ascii=draw(st.booleans()))


@st.composite
def csv_line(draw) -> str:
    cells = draw(st.lists(st.one_of(id_pool, token, st.sampled_from(HOSTILE_TEXT)),
                          min_size=2, max_size=5))
    out = io.StringIO()
    csv.writer(out, lineterminator="").writerow(cells)
    return out.getvalue()


def fields_line(n: int):
    return st.lists(token, min_size=n - 1, max_size=n + 1).map(" ".join)


@st.composite
def mangled(draw, line) -> bytes:
    """A plausible file (lines from ``line``) with random line ends, maybe a BOM, and a
    few hostile fragments spliced in at random byte offsets."""
    lines = draw(st.lists(line | st.just(""), max_size=6))
    end = draw(st.sampled_from(["\n", "\r\n", "\r"]))
    raw = (end.join(lines) + draw(st.sampled_from(["", end]))).encode()
    if draw(st.booleans()):
        raw = BOM.encode() + raw
    for _ in range(draw(st.integers(0, 3))):
        at = draw(st.integers(0, len(raw)))
        raw = raw[:at] + draw(fragment) + raw[at:]
    return raw


def lines_in(raw: bytes) -> int:
    return raw.replace(b"\r\n", b"\n").replace(b"\r", b"\n").count(b"\n") + 1


def loads_or_fails_cleanly(load, path: Path, n_lines: int | None):
    """Load ``path``; a TrawlError must be one line, start with the path, and any line
    (or row) number it gives must be between 1 and ``n_lines`` (unchecked when None).
    Any other exception escapes and fails the test."""
    try:
        return load(path)
    except TrawlError as exc:
        msg = str(exc)
        assert len(msg.splitlines()) == 1, msg
        assert msg.startswith(f"{path}:"), msg
        m = re.match(re.escape(str(path)) + r":(\d+): ", msg)
        if m and n_lines is not None:
            assert 1 <= int(m.group(1)) <= n_lines, msg
        return None


def assert_sound(cat: Catalogue) -> None:
    """A loaded catalogue is usable downstream: string ids, unique, TREC-safe, resolvable
    related ids, a fingerprint and templated texts that encode as UTF-8."""
    assert all(isinstance(i, str) and i and not any(c.isspace() for c in i) for i in cat.ids)
    assert len(set(cat.ids)) == len(cat.ids)
    assert all(r in cat.by_id for it in cat.items for r in it.related)
    assert re.fullmatch(r"[0-9a-f]{16}", cat.fingerprint)
    "\n".join(cat.texts()).encode("utf-8")


@pytest.fixture(scope="module")
def scratch(tmp_path_factory) -> Path:
    return tmp_path_factory.mktemp("hostile")


# --- properties: mangled files never crash a reader -----------------------------------------

@SETTINGS
@given(raw=mangled(jsonl_line()))
def test_jsonl_catalogue_loads_or_fails_cleanly(scratch, raw):
    path = scratch / "c.jsonl"
    path.write_bytes(raw)
    cat = loads_or_fails_cleanly(load_catalogue, path, lines_in(raw))
    if cat is not None:
        assert_sound(cat)


@SETTINGS
@given(header=st.lists(st.sampled_from(["id", "type", "title", "text", "related", "tags", "x",
                                        " id", "", BOM + "id"]), min_size=3, max_size=6),
       body=mangled(csv_line()))
def test_csv_catalogue_loads_or_fails_cleanly(scratch, header, body):
    raw = (",".join(header) + "\n").encode() + body
    path = scratch / "c.csv"
    path.write_bytes(raw)
    cat = loads_or_fails_cleanly(load_catalogue, path, lines_in(raw))
    if cat is not None:
        assert_sound(cat)


COLUMN = {
    "string": st.lists(st.one_of(id_pool, st.text(max_size=10), st.none()), min_size=1,
                       max_size=4).map(lambda v: pa.array(v, pa.string())),
    "int": st.lists(st.integers(-2**63, 2**63 - 1) | st.none(), min_size=1, max_size=4)
           .map(lambda v: pa.array(v, pa.int64())),
    "float": st.lists(st.floats() | st.none(), min_size=1, max_size=4)
             .map(lambda v: pa.array(v, pa.float64())),
    "bool": st.lists(st.booleans(), min_size=1, max_size=4).map(pa.array),
    "binary": st.lists(st.binary(max_size=5), min_size=1, max_size=4)
              .map(lambda v: pa.array(v, pa.binary())),
    "list": st.lists(st.lists(id_pool, max_size=2) | st.none(), min_size=1, max_size=4)
            .map(lambda v: pa.array(v, pa.list_(pa.string()))),
    "struct": st.lists(st.fixed_dictionaries({"a": st.integers(0, 9)}), min_size=1,
                       max_size=4).map(pa.array),
    "null": st.integers(1, 4).map(lambda n: pa.nulls(n)),
}


@st.composite
def parquet_table(draw) -> pa.Table:
    names = draw(st.lists(st.sampled_from(["id", "type", "title", "text", "related", "tags",
                                           "meta"]), min_size=1, max_size=7, unique=True))
    cols = [draw(COLUMN[draw(st.sampled_from(sorted(COLUMN)))]) for _ in names]
    n = min(len(c) for c in cols)
    return pa.table([c.slice(0, n) for c in cols], names=names)


@settings(SETTINGS, max_examples=60)
@given(table=parquet_table(), cut=st.none() | st.integers(0, 2000), junk=st.binary(max_size=8))
def test_parquet_catalogue_loads_or_fails_cleanly(scratch, table, cut, junk):
    path = scratch / "c.parquet"
    pq.write_table(table, path)
    if cut is not None:  # a truncated or corrupted download
        raw = path.read_bytes()
        path.write_bytes(raw[:cut] + junk + raw[cut + len(junk):])
    cat = loads_or_fails_cleanly(load_catalogue, path, table.num_rows)
    if cat is not None:
        assert_sound(cat)


@SETTINGS
@given(raw=mangled(st.tuples(token, st.text(max_size=15)).map("\t".join) | token))
def test_queries_load_or_fail_cleanly(scratch, raw):
    path = scratch / "q.tsv"
    path.write_bytes(raw)
    queries = loads_or_fails_cleanly(read_queries, path, lines_in(raw))
    if queries is not None:
        assert queries and all(q and not any(c.isspace() for c in q) for q in queries)
        assert all(t == " ".join(t.split()) and t for t in queries.values())


@SETTINGS
@given(raw=mangled(fields_line(4)))
def test_qrels_load_or_fail_cleanly(scratch, raw):
    path = scratch / "j.qrels"
    path.write_bytes(raw)
    qrels = loads_or_fails_cleanly(read_qrels, path, lines_in(raw))
    if qrels is not None:
        assert all(isinstance(g, int) for items in qrels.values() for g in items.values())
        assert all("\x00" not in i for items in qrels.values() for i in items)


@SETTINGS
@given(raw=mangled(fields_line(6)))
def test_runs_load_or_fail_cleanly(scratch, raw):
    path = scratch / "r.run"
    path.write_bytes(raw)
    run = loads_or_fails_cleanly(read_run, path, lines_in(raw))
    if run is not None:
        for pairs in run.results.values():
            scores = [s for _, s in pairs]
            assert scores == sorted(scores, reverse=True)
            assert all(s == s for s in scores)  # no NaN
            assert all("\x00" not in i for i, _ in pairs)


@settings(SETTINGS, max_examples=40)
@given(raw=mangled(jsonl_line()))
def test_check_command_exits_0_or_2_with_one_line_error(scratch, raw):
    path = scratch / "cli.jsonl"
    path.write_bytes(raw)
    result = invoke(["check", path, "--lengths", "words"])  # a crash would raise here
    assert result.exit_code in (0, 2)
    if result.exit_code == 2:
        assert result.stdout == ""
        assert re.fullmatch(rf"error: {re.escape(str(path))}:[^\n]*\n", result.stderr)
        assert "Traceback" not in result.stderr


# --- properties: the error names the right line --------------------------------------------

plain = st.text(st.characters(blacklist_categories=("Cs", "Cc", "Zl", "Zp")), min_size=1,
                max_size=12).filter(lambda s: s.strip() and not any(c.isspace() for c in s)
                                    and s[0] != BOM)


@SETTINGS
@given(n_lines=st.integers(1, 6), data=st.data())
def test_invalid_utf8_is_reported_on_its_line(scratch, n_lines, data):
    texts = [data.draw(plain) for _ in range(n_lines)]
    bad = data.draw(st.integers(0, n_lines - 1))
    end = data.draw(st.sampled_from([b"\n", b"\r\n", b"\r"]))
    lines = [t.encode() for t in texts]
    lines[bad] = lines[bad] + data.draw(st.sampled_from([b"\xff", b"\xc3(", b"\xed\xa0\x80"]))
    path = scratch / "q.tsv"
    path.write_bytes(end.join(lines) + end)
    with pytest.raises(TrawlError) as exc:
        read_queries(path)
    assert str(exc.value).startswith(f"{path}:{bad + 1}: not valid UTF-8"), str(exc.value)


BROKEN = {
    "jsonl": (lambda i: json.dumps({"id": f"i{i}", "type": "faq", "title": f"t{i}"}),
              ['{"id": "z", "type": "faq"', '{"id": "z", "type": "faq", "title": 1}', "[]",
               '{"id": "z", "type": "faq", "title": "\\ud800"}', '{"id": ' + "1" * 5000 + "}",
               "[" * 100_000]),
    "tsv": (lambda i: f"q{i}\tquery {i}", ["no tab here", "\tempty id", "q 1\ttext", "q\x00\tx"]),
    "qrels": (lambda i: f"q{i} 0 d{i} 1", ["q 0 d", "q 0 d one", "q 0 d 1 extra",
                                            "q 0 d\x00 1", "q 0 d " + "9" * 5000]),
    "run": (lambda i: f"q{i} Q0 d{i} 1 0.5 r", ["q Q0 d 1 0.5", "q Q0 d one 0.5 r",
                                                 "q Q0 d 1 NaN r", "q Q0 d 1 x r",
                                                 "q Q0 d\x00 1 0.5 r"]),
}
READERS = {"jsonl": load_catalogue, "tsv": read_queries, "qrels": read_qrels, "run": read_run}


@pytest.mark.parametrize("kind", sorted(BROKEN))
@SETTINGS
@given(data=st.data())
def test_first_bad_line_is_named(scratch, kind, data):
    good, broken = BROKEN[kind]
    n = data.draw(st.integers(1, 5))
    lines = [good(i) for i in range(n)]
    bad = data.draw(st.integers(0, n - 1))
    lines[bad] = data.draw(st.sampled_from(broken))
    for _ in range(data.draw(st.integers(0, 3))):  # blank lines still count
        lines.insert(data.draw(st.integers(0, len(lines))), data.draw(st.sampled_from(["", " "])))
    end = data.draw(st.sampled_from(["\n", "\r\n", "\r"]))
    path = scratch / f"f.{kind}"
    path.write_bytes((BOM if data.draw(st.booleans()) else "").encode()
                     + end.join(lines).encode() + end.encode())
    line_no = lines.index(next(ln for ln in lines if ln in broken)) + 1
    with pytest.raises(TrawlError) as exc:
        READERS[kind](path)
    assert str(exc.value).startswith(f"{path}:{line_no}: "), str(exc.value)
    assert len(str(exc.value).splitlines()) == 1


# --- properties: what is written reads back exactly ----------------------------------------

field_text = st.text(st.characters(blacklist_categories=("Cs",), blacklist_characters="\r\x00"),
                     max_size=30)


@SETTINGS
@given(rows=st.lists(st.tuples(plain, field_text, field_text), min_size=1, max_size=5,
                     unique_by=lambda r: r[0]),
       fmt=st.sampled_from(["jsonl", "csv", "parquet"]))
def test_catalogue_text_survives_every_format(scratch, rows, fmt):
    """Tabs, quotes, commas, newlines, emoji and RTL text inside fields come back as written
    (stripped of surrounding white space), in every format."""
    items = [{"id": i, "type": "faq", "title": t, "text": x} for i, t, x in rows]
    path = scratch / f"rt.{fmt}"
    if fmt == "jsonl":
        path.write_text("".join(json.dumps(r, ensure_ascii=False) + "\n" for r in items))
    elif fmt == "csv":
        with path.open("w", newline="", encoding="utf-8") as fh:
            w = csv.DictWriter(fh, ["id", "type", "title", "text"], lineterminator="\n")
            w.writeheader()
            w.writerows(items)
    else:
        pq.write_table(pa.Table.from_pylist(items), path)
    cat = load_catalogue(path)
    assert cat.ids == [r[0] for r in rows]
    assert [(it.title, it.text) for it in cat.items] == [(t.strip(), x.strip())
                                                         for _, t, x in rows]


@SETTINGS
@given(queries=st.dictionaries(plain, field_text.filter(has_visible), min_size=1, max_size=6))
def test_queries_round_trip(scratch, queries):
    # a query of invisible characters only is refused (tests/test_lookalikes.py)
    path = scratch / "rt.tsv"
    write_queries(path, queries)
    assert read_queries(path) == {q: " ".join(t.split()) for q, t in queries.items()}


@SETTINGS
@given(qrels=st.dictionaries(plain, st.dictionaries(plain, st.integers(-3, 10**12), min_size=1,
                                                    max_size=4), min_size=1, max_size=4))
def test_qrels_round_trip(scratch, qrels):
    path = scratch / "rt.qrels"
    write_qrels(path, qrels)
    assert read_qrels(path) == qrels


@SETTINGS
@given(results=st.dictionaries(plain, st.dictionaries(
    plain, st.floats(allow_nan=False, allow_infinity=False), min_size=1, max_size=4),
    min_size=1, max_size=4))
def test_runs_round_trip_exact_scores(scratch, results):
    path = scratch / "rt.run"
    run = make_run("tag", {q: d.items() for q, d in results.items()})
    write_run(path, run)
    back = read_run(path)
    assert back.name == "tag"
    assert dict(back.results) == dict(run.results)  # float repr round-trips exactly


# --- review sheets: real exports, filled in, then mangled -------------------------------------

@pytest.fixture(scope="module")
def sheets(tmp_path_factory):
    """A catalogue and a filled review sheet in both formats, as a reviewer returns them."""
    from trawl.review import export_sheet

    root = tmp_path_factory.mktemp("sheets")
    cat_path = root / "c.jsonl"
    cat_path.write_text("".join(json.dumps({"id": i, "type": "faq", "title": t, "text": t}) + "\n"
                                for i, t in [("007", "=SUM(A1) fares"), ("b", "שלום 😀"),
                                             ("c", "Refund\tform")]), encoding="utf-8")
    cat = load_catalogue(cat_path)
    qrels = {"q1": {"007": 2, "b": 1}, "q2": {"c": 2}}
    queries = {"q1": "fare caps 😀", "q2": "+refund"}
    export_sheet(qrels, queries, cat, root / "s.csv")
    text = (root / "s.csv").read_text(encoding="utf-8-sig")
    filled = re.sub(r",,(\r?\n)", r",ok,\1", text)  # every verdict cell filled
    (root / "s.csv").write_text(filled, encoding="utf-8-sig", newline="")
    export_sheet(qrels, queries, cat, root / "s.xlsx")
    return cat, (root / "s.csv").read_bytes(), (root / "s.xlsx").read_bytes()


@SETTINGS
@given(splices=st.lists(st.tuples(st.floats(0, 1), fragment), max_size=4),
       cut=st.none() | st.floats(0, 1))
def test_mangled_review_sheets_load_or_fail_cleanly(scratch, sheets, splices, cut):
    from trawl.review import import_sheets

    cat, raw, _ = sheets
    for at, frag in splices:
        pos = int(at * len(raw))
        raw = raw[:pos] + frag + raw[pos:]
    if cut is not None:
        raw = raw[:int(cut * len(raw))]
    path = scratch / "sheet.csv"
    path.write_bytes(raw)
    loads_or_fails_cleanly(lambda p: import_sheets([p], cat), path, lines_in(raw))


@settings(SETTINGS, max_examples=40)
@given(at=st.floats(0, 1), junk=st.binary(min_size=1, max_size=64), truncate=st.booleans())
def test_corrupted_xlsx_sheets_fail_cleanly(scratch, sheets, at, junk, truncate):
    from trawl.review import import_sheets

    cat, _, raw = sheets
    pos = int(at * len(raw))
    raw = raw[:pos] if truncate else raw[:pos] + junk + raw[pos + len(junk):]
    path = scratch / "sheet.xlsx"
    path.write_bytes(raw)
    loads_or_fails_cleanly(lambda p: import_sheets([p], cat), path, None)
