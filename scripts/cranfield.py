"""Write the public Cranfield collection in trawl's formats, for the Cranfield checks.

The collection (1,400 aeronautics abstracts, 225 queries, judgments made by people in
the 1960s Cranfield experiments) comes from the ir_datasets package's "cranfield"
dataset, which downloads the original files on first use:

    .venv/bin/pip install ir_datasets
    .venv/bin/python scripts/cranfield.py ~/data/cranfield
    TRAWL_CRANFIELD_DIR=~/data/cranfield make test

Written: ``catalogue.jsonl`` (ids c1..c1400, type ``abstract``, title, text),
``queries.tsv`` (q1..q225) and ``qrels.txt``. Queries are numbered by their position in
the query file, which is how the judgments number them (the query file's own numbers
skip values, from memory; ids taken from them would not match the judgments). The judgments' relevance codes 1-4
(1 = complete answer ... 4 = minimum interest) become grades 5 - code, so 4 is best;
code -1 (no interest) becomes grade 0.
"""

from __future__ import annotations

import argparse
import json
from collections.abc import Iterable
from pathlib import Path
from typing import Any


def grade(code: int) -> int:
    """Relevance code of the judgments -> trawl grade (higher is better, 0 = not relevant)."""
    if code not in (-1, 1, 2, 3, 4):
        raise ValueError(f"unexpected Cranfield relevance code {code}")
    return 0 if code == -1 else 5 - code


def one_line(text: str) -> str:
    return " ".join(text.split())


def catalogue_lines(docs: Iterable[Any]) -> list[str]:
    return [json.dumps({"id": f"c{d.doc_id}", "type": "abstract", "title": one_line(d.title),
                        "text": one_line(d.text)}, ensure_ascii=False) for d in docs]


def query_lines(queries: Iterable[Any]) -> list[str]:
    return [f"q{n}\t{one_line(q.text)}" for n, q in enumerate(queries, start=1)]


def qrels_lines(qrels: Iterable[Any]) -> list[str]:
    return [f"q{r.query_id} 0 c{r.doc_id} {grade(int(r.relevance))}" for r in qrels]


def convert(dataset: Any, out: Path) -> dict[str, int]:
    """Write the three files from an ir_datasets dataset; returns the line counts."""
    out.mkdir(parents=True, exist_ok=True)
    files = {"catalogue.jsonl": catalogue_lines(dataset.docs_iter()),
             "queries.tsv": query_lines(dataset.queries_iter()),
             "qrels.txt": qrels_lines(dataset.qrels_iter())}
    for name, lines in files.items():
        (out / name).write_text("".join(line + "\n" for line in lines), encoding="utf-8")
    return {name: len(lines) for name, lines in files.items()}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("output", type=Path, help="folder to write the three files into")
    args = parser.parse_args()
    import ir_datasets

    counts = convert(ir_datasets.load("cranfield"), args.output)
    print(", ".join(f"{name}: {n} lines" for name, n in counts.items()))


if __name__ == "__main__":
    main()
