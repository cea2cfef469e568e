"""The id rule, checked against the field splitting of TREC qrels and run lines."""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from trawl.catalogue import load_catalogue
from trawl.errors import CatalogueError, InputError
from trawl.ids import is_valid_id
from trawl.queries import read_queries


@pytest.mark.parametrize("text, ok", [
    ("q1", True), ("007", True), ("art-fares_2", True), ("ünïcode-ß", True),
    ("", False), (" ", False), ("a b", False), ("a\tb", False), ("a\nb", False),
    ("a\u00a0b", False),  # no-break space
    ("a\u2003b", False),  # em space
    ("a\u3000b", False),  # ideographic space
    ("q1 ", False),
])
def test_examples(text, ok):
    assert is_valid_id(text) is ok


@given(st.text(max_size=12))
def test_valid_exactly_when_a_trec_line_keeps_it_as_one_field(text):
    # TREC qrels and run lines are fields separated by white space, as trec_eval reads
    # them (from memory); our readers split them with str.split().
    assert is_valid_id(text) == (f"q 0 {text} 1".split() == ["q", "0", text, "1"])


def test_catalogue_and_queries_readers_apply_the_rule(tmp_path):
    # a no-break space is white space to the rule, though not to a plain ' ' check
    cat = tmp_path / "c.jsonl"
    cat.write_text('{"id": "a\\u00a0b", "type": "faq", "title": "T"}\n', encoding="utf-8")
    with pytest.raises(CatalogueError, match="c.jsonl:1: id: 'a\\\\xa0b' contains white space"):
        load_catalogue(cat)
    queries = tmp_path / "q.tsv"
    queries.write_text("q\u00a01\tlost bag\n", encoding="utf-8")
    with pytest.raises(InputError, match="q.tsv:1: qid: query id 'q\\\\xa01' contains white"):
        read_queries(queries)
