"""read_qrels through the columnar parser gives exactly what the line-by-line reader
gives: the same mapping in the same order, or the same located error."""

from __future__ import annotations

import random

import pytest

from trawl import judgments, qrelcolumns
from trawl.errors import InputError


def line_by_line(path, monkeypatch):
    with monkeypatch.context() as m:
        m.setattr(qrelcolumns, "read_qrels_columns", lambda _path: None)
        return as_read(path)


def as_read(path):
    try:
        return judgments.read_qrels(path)
    except InputError as exc:
        return str(exc)


def random_qrels_text(rng: random.Random) -> str:
    lines = []
    for q in range(rng.randint(1, 6)):
        for i in rng.sample(range(40), rng.randint(1, 8)):
            grade = rng.choice(["0", "1", "2", "3", "-1", "+2", "1.0"])
            lines.append(f"q{q}{rng.choice([' ', ' ', '  ', chr(9)])}0 d{i} {grade}")
    roll = rng.random()
    if roll < 0.3:
        rng.shuffle(lines)  # queries interleaved
    elif roll < 0.4:
        lines.append(lines[rng.randrange(len(lines))])  # a repeated pair
    elif roll < 0.5:
        lines[rng.randrange(len(lines))] = rng.choice(
            ["q0 0 dx 2.5", "q0 0 dy x", "q0 0 dz", "q0 0 d\u00a0w 1", "q0 0 dv 1_0"])
    if rng.random() < 0.2:
        lines.insert(rng.randrange(len(lines) + 1), "")
    return "\n".join(lines) + rng.choice(["", "\n"])


def test_same_result_as_line_by_line_on_random_files(tmp_path, monkeypatch):
    rng = random.Random(5)
    fast_used = 0
    for case in range(300):
        path = tmp_path / f"j{case}.qrels"
        path.write_text(random_qrels_text(rng))
        want, got = line_by_line(path, monkeypatch), as_read(path)
        assert got == want
        if not isinstance(want, str):
            assert list(got) == list(want)
            assert all(list(got[q]) == list(want[q]) for q in want)
        fast_used += qrelcolumns.read_qrels_columns(path) is not None
    assert fast_used > 150  # most well-formed files went the columnar way


@pytest.mark.parametrize("text", ["q1 0 a 2\nq1 0 a 1\n", "q1 0 a two\n", "q1 0 a\n", ""])
def test_files_with_errors_take_the_careful_path(tmp_path, text):
    path = tmp_path / "bad.qrels"
    path.write_text(text)
    assert qrelcolumns.read_qrels_columns(path) is None
    with pytest.raises(InputError):
        judgments.read_qrels(path)
