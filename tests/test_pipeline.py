"""`trawl eval` end to end on a small invented catalogue (a community library app)."""

from __future__ import annotations

import json
import re
from html.parser import HTMLParser
from pathlib import Path

import pytest

from trawl.report import format as fmt

from .conftest import invoke

ITEMS = [
    ("art-renew", "article", "Renewing your loans", "You can renew most books and audiobooks twice, unless another member has reserved them. Renew from the Loans screen or at any branch desk."),
    ("art-fines", "article", "Late fees and how to pay them", "Overdue items collect a small daily fee, capped per item. Pay at the kiosk, online from the Payments screen, or ask staff to waive fees in hardship."),
    ("art-holds", "article", "Placing a hold on a book", "If every copy is on loan, place a hold and we will message you when one is ready at your chosen branch. Holds wait on the shelf for seven days."),
    ("art-ebooks", "article", "Borrowing e-books and audiobooks", "Digital loans last 21 days and return themselves. Download the reading app, sign in with your card number and PIN, and borrow up to ten titles."),
    ("art-rooms", "article", "Booking a study room", "Study rooms seat up to six and can be booked for two hours a day. Bring your card; rooms are released if you are fifteen minutes late."),
    ("art-printing", "article", "Printing and scanning at branches", "Every branch has a printer and scanner. Send documents from your phone, then release them at the printer with your card. Colour pages cost more."),
    ("art-accessible", "article", "Accessible services", "Large print books, hearing loops at every desk, and a home delivery service for members who cannot visit."),
    ("faq-lost-card", "faq", "What do I do if I lose my library card?", "Report it lost from the Card screen so nobody else can borrow on it, then collect a replacement at any branch. The first replacement is free."),
    ("faq-kids", "faq", "Can children have their own card?", "Yes. Children under 16 can join with a parent or carer. Junior cards have no late fees and can borrow from the children's collection."),
    ("faq-hours", "faq", "When are the branches open?", "Most branches open from 9am to 7pm on weekdays and 10am to 4pm on Saturdays. The central library also opens on Sunday afternoons."),
    ("faq-donate", "faq", "Do you accept donated books?", "We accept recent paperbacks and children's books in good condition at the central library. We cannot take textbooks, magazines or encyclopaedias."),
    ("faq-wifi", "faq", "Is there free wifi?", "Free wifi is available in every branch. Join the network named for the library and accept the terms; no password is needed."),
    ("faq-limit", "faq", "How many items can I borrow?", "Adults can borrow up to 20 items at a time, including up to 5 films. Junior cards can borrow 12."),
    ("scr-loans", "screen", "My loans", "See what you have borrowed, due dates, and renew items."),
    ("scr-payments", "screen", "Payments", "See fees you owe and pay them with a bank card."),
    ("scr-card", "screen", "My card", "Show your digital card barcode, report a lost card, change your PIN."),
    ("scr-holds", "screen", "My holds", "Track reserved items, change the pick-up branch or cancel a hold."),
    ("scr-events", "screen", "Events calendar", "Story time, author talks, coding clubs and other events at each branch."),
    ("scr-search", "screen", "Catalogue search", "Search for books, films and music across every branch and see which copies are on the shelf."),
    ("frm-join", "form", "Join the library", "Apply for a free library card with your name, address and date of birth."),
    ("frm-suggest", "form", "Suggest a purchase", "Ask us to buy a book, film or audiobook we do not have."),
    ("frm-room", "form", "Study room booking", "Choose a branch, date and time to reserve a study room."),
    ("frm-contact", "form", "Contact us", "Send a question or complaint to the library team."),
    ("frm-waive", "form", "Ask to waive a fee", "Explain your circumstances and we will review fees on your account."),
]
RELATED = {"art-renew": ["scr-loans"], "art-fines": ["scr-payments", "frm-waive"],
           "art-holds": ["scr-holds"], "faq-lost-card": ["scr-card"], "art-rooms": ["frm-room"]}
QUERIES = [
    ("h1", "renew my books", {"art-renew": 2, "scr-loans": 2}),
    ("h2", "pay overdue fine", {"art-fines": 2, "scr-payments": 2}),
    ("h3", "lost card", {"faq-lost-card": 2, "scr-card": 1}),
    ("h4", "reserve a book that is out", {"art-holds": 2, "scr-holds": 1}),
    ("h5", "opening times sunday", {"faq-hours": 2}),
    ("h6", "get a library card", {"frm-join": 2, "faq-kids": 1}),
    ("h7", "borrow ebooks on phone", {"art-ebooks": 2}),
    ("h8", "print from my phone", {"art-printing": 2}),
    ("h9", "book a quiet room to study", {"frm-room": 2, "art-rooms": 2}),
    ("h10", "kids story time", {"scr-events": 2}),
    ("h11", "cannot afford the late fee", {"frm-waive": 2, "art-fines": 1}),
    ("h12", "request a book you dont have", {"frm-suggest": 2}),
    ("h13", "wifi password", {"faq-wifi": 2}),
    ("h14", "how many dvds can i take out", {"faq-limit": 2}),
    ("h15", "large print", {"art-accessible": 2}),
    ("h16", "is the book on the shelf", {"scr-search": 2}),
]
SYSTEMS = ["minilm", "bm25", "minilm+bm25"]


def write_library(folder: Path) -> tuple[Path, Path, Path]:
    """The invented catalogue, hand-written queries and their judgments."""
    folder.mkdir(parents=True, exist_ok=True)
    cat = folder / "library.jsonl"
    cat.write_text("".join(json.dumps({"id": i, "type": t, "title": ti, "text": tx,
                                       "related": RELATED.get(i, [])}) + "\n"
                           for i, t, ti, tx in ITEMS), encoding="utf-8")
    queries = folder / "people.queries.tsv"
    queries.write_text("".join(f"{q}\t{text}\n" for q, text, _ in QUERIES), encoding="utf-8")
    qrels = folder / "people.qrels"
    qrels.write_text("".join(f"{q} 0 {item} {g}\n" for q, _, judged in QUERIES
                             for item, g in judged.items()), encoding="utf-8")
    return cat, queries, qrels


@pytest.fixture(scope="module")
def library(tmp_path_factory) -> tuple[Path, Path, Path]:
    return write_library(tmp_path_factory.mktemp("library"))


def eval_args(library, out: Path, *extra: str) -> list:
    cat, queries, qrels = library
    return ["eval", cat, queries, qrels, "-e", "minilm", "-e", "bm25", "--fuse", "minilm+bm25",
            "-o", out, "--cache-dir", out.parent / "cache", "--resamples", "500", "-q", *extra]


@pytest.fixture(scope="module")
def evaluated(library, tmp_path_factory):
    out = tmp_path_factory.mktemp("eval") / "out"
    result = invoke(eval_args(library, out))
    assert result.exit_code == 0, result.output
    return out, result


class _Cells(HTMLParser):
    """The text of every element with a data-cell key, one entry per occurrence (a
    figure may be shown twice, e.g. the headline difference in its table and the matrix)."""

    def __init__(self) -> None:
        super().__init__()
        self.cells: dict[str, list[str]] = {}
        self._key: str | None = None

    def handle_starttag(self, tag, attrs):
        key = dict(attrs).get("data-cell")
        if key is not None:
            self.cells.setdefault(key, []).append("")
        self._key = key if key is not None else (self._key if tag == "span" else None)

    def handle_endtag(self, tag):
        self._key = None

    def handle_data(self, data):
        if self._key:
            self.cells[self._key][-1] += data


def report_cells(path: Path) -> dict[str, str]:
    """Each data-cell key's text; every occurrence of a key must show the same text."""
    parser = _Cells()
    parser.feed(path.read_text(encoding="utf-8"))
    for key, texts in parser.cells.items():
        assert len(set(texts)) == 1, (key, texts)
    return {key: texts[0] for key, texts in parser.cells.items()}


@pytest.mark.slow
def test_eval_writes_every_artefact(evaluated):
    out, _ = evaluated
    expected = ["report.html", "results.json", "judgments/scores.json", "judgments/scores.csv",
                "judgments/per-query.csv", "judgments/comparison.json",
                "judgments/comparison.csv", "judgments/misses.json", "judgments/misses.csv",
                "indexes/minilm/manifest.json", "indexes/bm25/manifest.json"]
    for name in SYSTEMS:
        expected += [f"judgments/runs/{name}.run", f"judgments/runs/{name}.run.latency.json"]
    missing = [p for p in expected if not (out / p).is_file()]
    assert not missing
    run_lines = (out / "judgments/runs/minilm+bm25.run").read_text().splitlines()
    assert len(run_lines) == len(QUERIES) * len(ITEMS)  # top-k capped at the 24 items
    per_query = (out / "judgments/per-query.csv").read_text().splitlines()
    assert per_query[0] == "run,qid,types,ndcg@10,mrr@10,recall@10,recall@100"
    assert len(per_query) == 1 + len(SYSTEMS) * len(QUERIES)


@pytest.mark.slow
def test_report_figures_equal_the_json_tables(evaluated):
    out, _ = evaluated
    cells = report_cells(out / "report.html")
    scores = json.loads((out / "judgments/scores.json").read_text())
    checked = 0
    for s in scores["scores"]:
        if s["metric"] != "ndcg@10":
            continue
        key = f"judgments|{s['run']}|ndcg@10|{s['type'] or 'all'}"
        assert cells[key] == fmt.num(s["mean"]), key
        if s["type"] is None:
            assert cells[key + "|interval"] == fmt.interval_of(s)
        checked += 1
    assert checked == len(SYSTEMS) * 5  # all queries + 4 destination types
    comparison = json.loads((out / "judgments/comparison.json").read_text())
    for r in comparison["rows"]:
        key = f"judgments|{r['run']}|{r['metric']}|{r['type'] or 'all'}"
        assert cells[key + "|diff"] == fmt.signed(r["diff"])
        assert cells[key + "|p"] == fmt.pvalue(r["p_corrected"])
    misses = json.loads((out / "judgments/misses.json").read_text())
    for m in misses:
        for row in m["rows"]:
            assert cells[f"judgments|{m['run']}|hit@1|{row['type']}"] == fmt.share(row["hit_at_1"])


@pytest.mark.slow
def test_scores_match_ir_measures_on_the_written_runs(evaluated):
    # Reference: ir_measures (wrapping trec_eval's definitions) on the run and qrels files
    # the pipeline wrote, so the whole chain search -> file -> score is checked.
    ir_measures = pytest.importorskip("ir_measures")
    out, _ = evaluated
    qrels_file = json.loads((out / "results.json").read_text())["evaluations"][0]["qrels_file"]
    qrels = list(ir_measures.read_trec_qrels(qrels_file))
    scores = json.loads((out / "judgments/scores.json").read_text())["scores"]
    ours = {s["run"]: s["mean"] for s in scores if s["metric"] == "ndcg@10" and s["type"] is None}
    for name in SYSTEMS:
        run = list(ir_measures.read_trec_run(str(out / f"judgments/runs/{name}.run")))
        ref = ir_measures.calc_aggregate([ir_measures.nDCG @ 10], qrels, run)
        assert ours[name] == pytest.approx(ref[ir_measures.nDCG @ 10], abs=1e-9), name


@pytest.mark.slow
def test_summary_shows_quality_latency_marks_and_miss_headline(evaluated):
    _, result = evaluated
    text = result.stdout
    # the decision block comes first (eval prints the verdict before the tables); qrels
    # given without --human and without synthesis provenance are of unknown origin
    assert text.startswith("decision (ndcg@10 on people.qrels, margin 0.01): ")
    lines = text.splitlines()
    lines = lines[lines.index("people.qrels: 16 queries (judgments of unknown origin: not "
                              "declared human, no synthesis provenance found)"):]
    assert re.match(r"\s+system\s+ndcg@10\s+95% interval\s+vs minilm\s+p50 ms\s+index", lines[1])
    # system, mean, "low to high", then the difference and its mark (or "baseline")
    body = [ln.split() for ln in lines[3:6]]
    assert [b[0] for b in body] == SYSTEMS
    assert body[0][5] == "baseline"
    for b in body[1:]:
        assert b[6] in (fmt.BETTER, fmt.WORSE, fmt.UNCLEAR)
    assert any(ln.startswith("  misses: ") for ln in lines)
    assert fmt.MARK_LEGEND in text


def _sidecars(out: Path) -> dict[str, bytes]:
    return {n: (out / f"judgments/runs/{n}.run.latency.json").read_bytes() for n in SYSTEMS}


def _manifests(out: Path) -> dict[str, str]:
    return {n: (out / "indexes" / n / "manifest.json").read_text() for n in ("minilm", "bm25")}


@pytest.mark.slow
def test_rerun_reuses_indexes_and_the_embedding_cache(library, evaluated):
    out, _ = evaluated
    before = _manifests(out)
    timed = _sidecars(out)
    scores_before = (out / "judgments/scores.json").read_bytes()
    again = invoke(eval_args(library, out))
    assert again.exit_code == 0, again.output
    assert _manifests(out) == before  # indexes reused as they were, not rebuilt
    assert _sidecars(out) == timed  # unchanged inputs: runs and latency kept, not re-timed
    notes = json.loads((out / "results.json").read_text())["setup"]["notes"]
    assert notes["reused"].startswith("runs and latency of minilm, bm25, minilm+bm25 come "
                                      "from an earlier evaluation")
    # without the index folder, vectors come from the embedding cache: nothing re-embedded
    import shutil

    shutil.rmtree(out / "indexes" / "minilm")
    third = invoke(eval_args(library, out))
    assert third.exit_code == 0, third.output
    build = json.loads((out / "indexes/minilm/manifest.json").read_text())["build"]
    assert (build["embedded"], build["reused"]) == (0, len(ITEMS))
    assert _sidecars(out) == timed  # a rebuilt but identical index keeps its runs too
    # same inputs and seed: the same scores, intervals and warnings, byte for byte
    assert (out / "judgments/scores.json").read_bytes() == scores_before
    retimed = invoke(eval_args(library, out, "--retime"))
    assert retimed.exit_code == 0, retimed.output
    fresh = {n: json.loads(b) for n, b in _sidecars(out).items()}
    assert all(fresh[n]["inputs"] == json.loads(timed[n])["inputs"] for n in SYSTEMS)
    assert fresh != {n: json.loads(b) for n, b in timed.items()}  # measured again
    assert "reused" not in json.loads((out / "results.json").read_text())["setup"]["notes"]
    assert (out / "judgments/scores.json").read_bytes() == scores_before


@pytest.mark.slow
def test_silver_sets_are_labelled_as_estimates(library, tmp_path):
    from trawl.silver import write_silver
    from trawl.synth import SilverSet

    cat, _, _ = library
    prefix = tmp_path / "lib-silver"
    # written by synth's own writer, from hand-made provenance (as `trawl synth` records it)
    made = [("s1", "renewing loans", "art-renew", "keyword"),
            ("s2", "where do i pay fees", "art-fines", "question"),
            ("s3", "misplaced membership card", "faq-lost-card", "paraphrase")]
    write_silver(prefix, SilverSet(
        {q: text for q, text, _, _ in made}, {q: {item: 2} for q, _, item, _ in made},
        tuple({"qid": q, "text": text, "source": item, "style": style, "seed": 7}
              for q, text, item, style in made), {}))
    out = tmp_path / "out"
    result = invoke(["eval", cat, f"{prefix}.queries.tsv", f"{prefix}.qrels", "-e", "bm25",
                     "-e", "strict=bm25;k1=0.9;b=0.4", "-o", out, "--cache-dir", tmp_path / "cache",
                     "--resamples", "200", "-q"])
    assert result.exit_code == 0, result.output
    assert "silver judgments: figures are estimates; agreement with human judgments not " \
           "measured; see docs/silver-quality.md" in result.stdout
    bundle = json.loads((out / "results.json").read_text())
    ev = bundle["evaluations"][0]
    assert ev["silver"] is True
    assert ev["how"] == ("synthesised from the catalogue by trawl synth (keyword 1, paraphrase 1, "
                         "question 1; seed 7)")
    assert [s["name"] for s in bundle["systems"]] == ["bm25", "strict"]
    page = (out / "report.html").read_text()
    assert "Silver judgments are estimates." in page
    human = invoke(["eval", cat, f"{prefix}.queries.tsv", f"{prefix}.qrels", "-e", "bm25",
                    "-o", tmp_path / "out2", "--judgments", "human", "-q", "--json"])
    human_ev = json.loads(human.stdout)["evaluations"][0]
    assert (human_ev["silver"], human_ev["judged_by"]) == (False, "human judgments")
    assert ev["judged_by"] == ("silver judgments: figures are estimates; agreement with human "
                               "judgments not measured; see docs/silver-quality.md")


@pytest.mark.parametrize("extra, message", [
    (["--baseline", "nope"], "error: --baseline 'nope' is not one of the systems: minilm, bm25, "
                             "minilm+bm25"),
    (["--fuse", "minilm+colbert"], "error: --fuse 'minilm+colbert': 'colbert' is not one of "
                                   "the systems given with -e (minilm, bm25)"),
    (["-e", "bm25"], "error: two encoders are both named 'bm25'; name them apart with "
                     "-e NAME=SPEC"),
    (["-m", "ndcg@x"], "error: unknown metric 'ndcg@x'"),
])
def test_bad_requests_are_refused_before_any_work(library, tmp_path, extra, message):
    out = tmp_path / "out"
    result = invoke(eval_args(library, out, *extra))
    assert result.exit_code == 2
    assert result.stderr.startswith(message), result.stderr
    assert not out.exists()


def test_qrels_without_query_text_is_a_located_error(library, tmp_path):
    cat, queries, qrels = library
    partial = tmp_path / "few.queries.tsv"
    partial.write_text("h1\trenew my books\n", encoding="utf-8")
    result = invoke(["eval", cat, partial, qrels, "-e", "bm25", "-o", tmp_path / "out", "-q"])
    assert result.exit_code == 2
    assert result.stderr == (f"error: {qrels}: 15 judged query id(s) have no text in {partial}, "
                             "e.g. 'h2'; give the queries file that goes with these qrels\n")


def test_search_key_follows_the_inputs_not_the_build_time():
    from trawl.pipeline import fused_key, search_key

    manifest = {"encoder": {"spec": "minilm", "fingerprint": "ab"}, "catalogue": {"items": 3},
                "build": {"created_at": "then", "seconds": 1.0}}
    queries = {"q1": "renew my books", "q2": "lost card"}
    key = search_key(manifest, queries, 10, 2)
    rebuilt = dict(manifest, build={"created_at": "now", "seconds": 2.0})
    assert search_key(rebuilt, queries, 10, 2) == key
    other_weights = dict(manifest, encoder={"spec": "minilm", "fingerprint": "cd"})
    changed = [search_key(other_weights, queries, 10, 2),
               search_key(manifest, {"q1": "renew my book", "q2": "lost card"}, 10, 2),
               search_key(manifest, {"q2": "lost card", "q1": "renew my books"}, 10, 2),
               search_key(manifest, queries, 5, 2),
               search_key(manifest, queries, 10, 1)]
    assert len({key, *changed}) == 6
    assert fused_key([key, "x"], 10) != fused_key(["x", key], 10)


def test_write_rows_picks_json_or_csv_by_the_file_name(tmp_path):
    import csv

    from trawl.pipeline import write_rows

    rows = [{"run": "bm25", "qid": "h1", "types": ["faq", "form"], "ndcg@10": 0.5},
            {"run": "bm25", "qid": "h2", "types": [], "ndcg@10": float("nan")}]
    columns = ["run", "qid", "types", "ndcg@10"]
    write_rows(tmp_path / "rows.json", rows, columns)
    assert (tmp_path / "rows.json").read_text(encoding="utf-8") == json.dumps(
        rows, indent=1, ensure_ascii=False) + "\n"
    write_rows(tmp_path / "rows.csv", rows, columns)
    # Reference: Python's csv module reads back what was written.
    with open(tmp_path / "rows.csv", newline="", encoding="utf-8") as fh:
        read = list(csv.reader(fh))
    assert read == [columns, ["bm25", "h1", "faq form", "0.5"], ["bm25", "h2", "", ""]]
