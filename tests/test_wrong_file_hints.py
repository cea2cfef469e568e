"""A file given where another kind belongs (the usual first-hour mistake: arguments in
the wrong order) is refused with a message that names the kind it looks like."""

from __future__ import annotations

import pytest

from trawl.errors import InputError
from trawl.judgments import read_qrels
from trawl.queries import read_queries
from trawl.runs import read_run

from .conftest import GOLD_QRELS, GOLD_QUERIES, invoke

# Line shapes from the TREC formats (run: qid Q0 docno rank score tag; qrels: qid 0 docno
# relevance), as trec_eval documents them.
RUN_LINE = "q1 Q0 d7 1 12.5 dense\n"
QRELS_LINE = "q1 0 d7 2\n"
QUERIES_LINE = "q1\tlost my wallet on the bus\n"


@pytest.mark.parametrize("reader, text, kind", [
    (read_qrels, RUN_LINE, "looks like a TREC run"),
    (read_qrels, QUERIES_LINE * 2, "looks like a queries file"),
    (read_run, QRELS_LINE, "looks like qrels"),
    (read_queries, QRELS_LINE, "looks like qrels"),
    (read_queries, RUN_LINE, "looks like a TREC run"),
])
def test_a_file_of_another_kind_is_named(tmp_path, reader, text, kind):
    path = tmp_path / "given.txt"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(InputError) as err:
        reader(path)
    message = str(err.value)
    assert f"{kind} " in message and message.endswith("check the order of the files")
    assert "\n" not in message


def test_a_malformed_line_of_the_right_kind_gets_no_hint(tmp_path):
    path = tmp_path / "bad.qrels"
    path.write_text("q1 0 d7\n", encoding="utf-8")
    with pytest.raises(InputError) as err:
        read_qrels(path)
    assert "got 3" in str(err.value) and "looks like" not in str(err.value)


def test_score_with_qrels_and_queries_swapped_exits_2(tmp_path):
    result = invoke(["score", GOLD_QUERIES, GOLD_QRELS])
    assert result.exit_code == 2
    assert result.stderr.startswith("error: ") and "looks like" in result.stderr
