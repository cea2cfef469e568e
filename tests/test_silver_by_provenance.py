"""Judgments are silver when their provenance says so, never because of a file name.

Before, people's judgments saved as kv.qrels beside the catalogue kv.jsonl were
labelled "silver (machine-made) ... estimates" by `score` and `eval`.
"""

from __future__ import annotations

import json

from trawl.pipeline.sets import JudgmentSet, load_set
from trawl.silver import find_provenance, is_silver

CATALOGUE = [{"id": "kv-1", "type": "faq", "title": "Fares for children"},
             {"id": "kv-2", "type": "form", "title": "Claim a refund for a delay"}]
QRELS = "q1 0 kv-1 2\nq2 0 kv-2 1\n"
QUERIES = "q1\tchild fares\nq2\tmy train was late\n"


def jsonl(path, records) -> None:
    path.write_text("".join(json.dumps(r) + "\n" for r in records), encoding="utf-8")


def test_human_qrels_beside_a_catalogue_of_the_same_name_are_not_silver(tmp_path):
    jsonl(tmp_path / "kv.jsonl", CATALOGUE)
    (tmp_path / "kv.qrels").write_text(QRELS)
    (tmp_path / "kv.queries.tsv").write_text(QUERIES)
    assert not is_silver(tmp_path / "kv.qrels")
    loaded = load_set(JudgmentSet("kv", tmp_path / "kv.queries.tsv", tmp_path / "kv.qrels"))
    assert loaded.silver is False
    assert "no synthesis provenance" in loaded.how


def test_synthesis_provenance_makes_them_silver(tmp_path):
    jsonl(tmp_path / "kv.jsonl", [{"qid": "q1", "source": "kv-1", "style": "keyword", "seed": 0},
                                  {"qid": "q2", "source": "kv-2", "style": "question",
                                   "seed": 0}])
    (tmp_path / "kv.qrels").write_text(QRELS)
    assert find_provenance(tmp_path / "kv.qrels") == tmp_path / "kv.jsonl"


def test_a_file_only_starting_like_provenance_is_not_provenance(tmp_path):
    jsonl(tmp_path / "kv.jsonl", [{"qid": "q1", "source": "kv-1", "style": "keyword"},
                                  *CATALOGUE])
    (tmp_path / "kv.qrels").write_text(QRELS)
    assert not is_silver(tmp_path / "kv.qrels")


def test_provenance_of_other_queries_does_not_make_these_judgments_silver(tmp_path):
    # a synth run's sidecar left beside people's judgments of other queries
    jsonl(tmp_path / "kv.jsonl", [{"qid": "syn-1", "source": "kv-1", "style": "keyword"}])
    (tmp_path / "kv.qrels").write_text(QRELS)
    assert not is_silver(tmp_path / "kv.qrels")
