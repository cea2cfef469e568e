"""A tiny review world shared by the review tests: an invented transit rider app's
catalogue, silver queries and judgments (with provenance) and two runs, plus sheet helpers.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

from trawl.catalogue import load_catalogue
from trawl.judgments import write_qrels
from trawl.queries import write_queries
from trawl.review import unguard_cell
from trawl.runs import make_run, write_run

ITEMS = [
    {"id": "kb-fares", "type": "article", "title": "Fares and zones",
     "text": "How zone fares work. " * 30, "deeplink": "qf://kb/fares"},
    {"id": "kb-refund", "type": "article", "title": "Refunds for delayed trips"},
    {"id": "faq-cap", "type": "faq", "title": "Is there a weekly fare cap?", "text": "Yes."},
    {"id": "faq-lost", "type": "faq", "title": "Where is lost property kept?"},
    {"id": "scr-wallet", "type": "screen", "title": "=HYPERLINK(\"http://x\",\"Wallet\")",
     "text": "Your passes and balance", "deeplink": "qf://wallet"},
    {"id": "scr-plan", "type": "screen", "title": "Plan a trip"},
    {"id": "frm-refund", "type": "form", "title": "+Request a refund"},
    {"id": "-frm-lost", "type": "form", "title": "Report lost property"},
    {"id": "007", "type": "faq", "title": "Can I bring a bike?"},
]


def make_world(tmp_path: Path) -> dict:
    """Catalogue, queries, silver qrels (+ provenance) and two runs, all tiny."""
    cat = tmp_path / "cat.jsonl"
    cat.write_text("".join(json.dumps(it) + "\n" for it in ITEMS), encoding="utf-8")
    queries = {"s1": "how much is a zone 2 fare", "s2": "refund late bus",
               "s3": "weekly cap", "s4": "lost my bag call 020 7946 0958",
               "s5": "@wallet balance", "s6": "bike on train"}
    write_queries(tmp_path / "silver.queries.tsv", queries)
    qrels = {"s1": {"kb-fares": 2, "faq-cap": 1}, "s2": {"frm-refund": 2, "kb-refund": 1},
             "s3": {"faq-cap": 2}, "s4": {"-frm-lost": 2, "faq-lost": 1, "scr-plan": 0},
             "s5": {"scr-wallet": 2}, "s6": {"007": 2}}
    write_qrels(tmp_path / "silver.qrels", qrels)
    styles = {"s1": "question", "s2": "keyword", "s3": "keyword", "s4": "typo",
              "s5": "keyword", "s6": "question"}
    (tmp_path / "silver.jsonl").write_text(
        "".join(json.dumps({"qid": q, "style": s, "source": "x"}) + "\n"
                for q, s in styles.items()), encoding="utf-8")
    ids = [it["id"] for it in ITEMS]
    run_a = make_run("alpha", {q: [(i, float(-k)) for k, i in enumerate(ids)] for q in queries})
    run_b = make_run("beta", {q: [(i, float(k)) for k, i in enumerate(ids)] for q in queries})
    write_run(tmp_path / "alpha.run", run_a)
    write_run(tmp_path / "beta.run", run_b)
    return {"dir": tmp_path, "cat": cat, "catalogue": load_catalogue(cat), "queries": queries,
            "qrels": qrels, "styles": styles, "runs": [run_a, run_b]}


def sheet_rows(path: Path) -> list[dict[str, str]]:
    """Data rows of a sheet as dicts (notes skipped), cells as written."""
    records = list(csv.reader(io.StringIO(path.read_bytes().decode("utf-8-sig"), newline="")))
    records = [r for r in records if r and not r[0].startswith("#")]
    return [dict(zip(records[0], r)) for r in records[1:]]


def fill_sheet(path: Path, verdicts: dict[tuple[str, str], str], out: Path | None = None
               ) -> Path:
    """Set the verdict of some rows, keeping everything else byte for byte."""
    records = list(csv.reader(io.StringIO(path.read_bytes().decode("utf-8-sig"), newline="")))
    header_at = next(i for i, r in enumerate(records) if r and r[0] == "qid")
    col = {h: i for i, h in enumerate(records[header_at])}
    for r in records[header_at + 1:]:
        key = (unguard_cell(r[col["qid"]]), unguard_cell(r[col["item_id"]]))
        if key in verdicts:
            r[col["verdict"]] = verdicts[key]
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\r\n").writerows(records)
    out = out or path
    out.write_bytes(buf.getvalue().encode("utf-8-sig"))
    return out
