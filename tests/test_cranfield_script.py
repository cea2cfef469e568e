"""scripts/cranfield.py writes what trawl's readers and the Cranfield checks expect."""

from __future__ import annotations

import importlib.util
from collections import namedtuple

import pytest

from trawl.catalogue import load_catalogue
from trawl.judgments import read_qrels
from trawl.queries import read_queries

from .conftest import ROOT

Doc = namedtuple("Doc", "doc_id title text author bib")
Query = namedtuple("Query", "query_id text")
Qrel = namedtuple("Qrel", "query_id doc_id relevance iteration")


def load_script():
    spec = importlib.util.spec_from_file_location("cranfield_script", ROOT / "scripts" / "cranfield.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)  # type: ignore[union-attr]
    return module


class FakeDataset:
    """The three iterators of ir_datasets' "cranfield" dataset, with its record fields."""

    def docs_iter(self):
        return iter([Doc("1", "wing in a\nslipstream", "wing in a slipstream .\nan  experiment", "", ""),
                     Doc("2", "heat transfer", "", "", "")])

    def queries_iter(self):  # the file's own numbers skip values; position is what counts
        return iter([Query("1", "what similarity\nlaws"), Query("2", "heat"), Query("4", "wings")])

    def qrels_iter(self):
        return iter([Qrel("1", "1", 1, "0"), Qrel("1", "2", -1, "0"), Qrel("3", "1", 4, "0")])


def test_conversion_reads_back_with_trawl_readers(tmp_path):
    counts = load_script().convert(FakeDataset(), tmp_path)
    assert counts == {"catalogue.jsonl": 2, "queries.tsv": 3, "qrels.txt": 3}
    cat = load_catalogue(tmp_path / "catalogue.jsonl")
    assert cat.ids == ["c1", "c2"] and cat.items[0].text == "wing in a slipstream . an experiment"
    assert read_queries(tmp_path / "queries.tsv") == {
        "q1": "what similarity laws", "q2": "heat", "q3": "wings"}
    # codes 1 (complete answer) .. 4 (minimum interest) -> grades 4..1, -1 -> 0; the same
    # mapping as the collection's README in the shared data folder
    assert {q: dict(v) for q, v in read_qrels(tmp_path / "qrels.txt").items()} == {
        "q1": {"c1": 4, "c2": 0}, "q3": {"c1": 1}}


def test_unknown_relevance_code_is_refused():
    with pytest.raises(ValueError, match="code 7"):
        load_script().grade(7)
