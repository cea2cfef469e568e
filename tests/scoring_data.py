"""A tiny invented judged collection (transit rider app) for the scoring tests.

Hand-computed facts the tests rely on, per query (types from the best-graded items):

    query  wanted (grade 2)          type(s)        dense run         lexical run
    q1     scr-topup (+art-fares 1)  screen         art-fares first   scr-topup first
    q2     art-refunds               article        art-refunds 1st   faq-pets, art-refunds
    q3     faq-pets                  faq            art-fares, faq    faq-pets first
    q4     frm-lost, scr-trips       form, screen   scr-topup only    frm-lost first
    q5     scr-trips                 screen         (no results)      scr-trips first
    q6     (art-fares graded 0)      -              art-fares         (no results)

The dense run also lists q9 (not judged) with an item missing from the catalogue.
"""

from __future__ import annotations

from pathlib import Path

CATALOGUE = """\
{"id": "art-fares", "type": "article", "title": "How fares work", "text": "Zones, peak and off-peak fares."}
{"id": "art-refunds", "type": "article", "title": "Refunds for delayed trips", "text": "Claim when a trip runs 30 minutes late."}
{"id": "faq-pets", "type": "faq", "title": "Can I bring my dog?", "text": "Small pets ride free in a carrier."}
{"id": "scr-topup", "type": "screen", "title": "Top up card", "text": "Add value to your travel card."}
{"id": "scr-trips", "type": "screen", "title": "My trips", "text": "Your recent journeys."}
{"id": "frm-lost", "type": "form", "title": "Report lost property", "text": "Tell us what you lost."}
"""
QRELS = """\
q1 0 scr-topup 2
q1 0 art-fares 1
q2 0 art-refunds 2
q3 0 faq-pets 2
q4 0 frm-lost 2
q4 0 scr-trips 2
q5 0 scr-trips 2
q6 0 art-fares 0
"""
QUERIES = """\
q1\tadd money to my card
q2\ttrain was late can i get money back
q3\tdogs on buses
q4\tleft my bag on the bus
q5\twhere are my past journeys
q6\tfare zones
"""
DENSE = """\
q1 Q0 art-fares 1 0.9 dense
q1 Q0 scr-topup 2 0.8 dense
q2 Q0 art-refunds 1 0.7 dense
q3 Q0 art-fares 1 0.6 dense
q3 Q0 faq-pets 2 0.5 dense
q4 Q0 scr-topup 1 0.4 dense
q6 Q0 art-fares 1 0.9 dense
q9 Q0 ghost-item 1 0.3 dense
"""
LEXICAL = """\
q1 Q0 scr-topup 1 12.0 lexical
q2 Q0 faq-pets 1 9.0 lexical
q2 Q0 art-refunds 2 8.0 lexical
q3 Q0 faq-pets 1 7.5 lexical
q4 Q0 frm-lost 1 7.0 lexical
q5 Q0 scr-trips 1 3.0 lexical
"""


def write_collection(folder: Path) -> dict[str, Path]:
    files = {"catalogue": folder / "items.jsonl", "qrels": folder / "gold.qrels",
             "queries": folder / "gold.queries.tsv", "dense": folder / "dense.run",
             "lexical": folder / "lexical.run"}
    for key, text in (("catalogue", CATALOGUE), ("qrels", QRELS), ("queries", QUERIES),
                      ("dense", DENSE), ("lexical", LEXICAL)):
        files[key].write_text(text)
    return files
