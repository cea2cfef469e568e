"""A search while its index folder is rebuilt sees the old index or the new one, whole.

The loop from the report: one process rebuilds the folder again and again from two
catalogue files that hold the same items in a different line order (so ids.txt and the
term matrix are permuted between builds), while this process opens and searches it.
Every search must give the one correct output; before, some opened ids from one build
and the matrix from the other and ranked the wrong items with exit 0.
"""

from __future__ import annotations

import subprocess
import sys
import textwrap
import time

from trawl.catalogue import Catalogue, Item
from trawl.index import build_index, open_index

WORDS = ["fare", "pass", "refund", "delay", "ticket", "zone", "bike", "ferry", "night",
         "station", "lift", "stroller", "card", "route", "timetable", "alert"]
QUERIES = {f"q{i}": f"{WORDS[i % 16]} {WORDS[(3 * i) % 16]}" for i in range(12)}


def items(n: int = 400) -> list[Item]:
    return [Item(f"it{i:04d}", "faq", f"{WORDS[i % 16]} {WORDS[(i * 7) % 16]} {i}",
                 " ".join(WORDS[(i * k) % 16] for k in range(1, 2 + i % 9)))
            for i in range(n)]


def write_catalogue(path, its) -> None:
    import json

    path.write_text("".join(json.dumps({"id": it.id, "type": it.type, "title": it.title,
                                        "text": it.text}) + "\n" for it in its))


BUILDER = textwrap.dedent("""
    import sys, time
    from trawl.catalogue import load_catalogue
    from trawl.index import build_index
    a, b, out, cache, stop_after = sys.argv[1:6]
    cats = [load_catalogue(a), load_catalogue(b)]
    end = time.time() + float(stop_after)
    n = 0
    while time.time() < end:
        build_index(cats[n % 2], "bm25", out, cache_dir=cache, quiet=True)
        n += 1
    print(n)
""")


def test_searches_during_rebuilds_never_mix_two_builds(tmp_path):
    its = items()
    write_catalogue(tmp_path / "a.jsonl", its)
    write_catalogue(tmp_path / "b.jsonl", its[::-1])
    out = tmp_path / "idx"
    build_index(Catalogue("a.jsonl", tuple(its)), "bm25", out, cache_dir=tmp_path / "c",
                quiet=True)
    want = open_index(out).search(QUERIES, k=10, quiet=True).results
    builder = subprocess.Popen([sys.executable, "-c", BUILDER, tmp_path / "a.jsonl",
                                tmp_path / "b.jsonl", out, tmp_path / "c", "6"],
                               stdout=subprocess.PIPE, text=True)
    searches, wrong, errors = 0, 0, []
    try:
        time.sleep(0.5)  # let the builder get going
        while builder.poll() is None:
            try:
                got = open_index(out).search(QUERIES, k=10, quiet=True).results
            except Exception as exc:  # a reader may wait, never fail or mix
                errors.append(repr(exc))
                continue
            searches += 1
            wrong += got != want
    finally:
        builds = int(builder.communicate(timeout=60)[0] or 0)
    assert builds >= 10 and searches >= 20, (builds, searches)
    assert errors == [] and wrong == 0, (wrong, searches, errors[:3])
