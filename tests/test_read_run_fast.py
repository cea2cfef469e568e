"""read_run's columnar reading of plainly written runs gives exactly what the
line-by-line reader gives: same Run (order, ties, name) and the same located errors."""

from __future__ import annotations

import random

import pytest

from trawl import runs
from trawl.errors import InputError


def line_by_line(path):
    """read_run with the fast path switched off."""
    saved = runs._read_columns
    runs._read_columns = lambda *a: None
    try:
        return runs.read_run(path)
    except InputError as exc:
        return str(exc)
    finally:
        runs._read_columns = saved


def as_read(path):
    try:
        return runs.read_run(path)
    except InputError as exc:
        return str(exc)


def random_run_text(rng: random.Random) -> str:
    lines = []
    for q in range(rng.randint(1, 5)):
        for r, i in enumerate(rng.sample(range(30), rng.randint(1, 12)), start=1):
            score = rng.choice(["1", "0.5", "0.25", "2", "-1", "1e3", "0.0", "-0.0", ".5"])
            sep = rng.choice([" ", "  ", "\t"])
            lines.append(f"q{q}{sep}Q0 d{i} {r} {score} tag{q}")
    roll = rng.random()
    if roll < 0.3:
        rng.shuffle(lines)  # queries interleaved, scores out of order
    elif roll < 0.4:
        lines.insert(rng.randrange(len(lines) + 1), lines[rng.randrange(len(lines))])
    elif roll < 0.45:
        lines[rng.randrange(len(lines))] += " extra"
    elif roll < 0.5:
        lines[rng.randrange(len(lines))] = rng.choice(
            ["q0 Q0 dx -1 1 t", "q0 Q0 dy 1 nan t", "q0 Q0 dé 1 1 t", "q0 Q0 dz 1 x t",
             "q0 Q0 d\x0b 1 1 t", "q0 Q0 dn 1 1_0 t", "q0 Q0 di 1 inf t",
             "q0 Q0 dj 1 -Infinity t", "q0 Q0 dk 1 1e999 t"])
    if rng.random() < 0.2:
        lines.insert(rng.randrange(len(lines) + 1), "")
    return "\n".join(lines) + rng.choice(["", "\n", "\n\n"])


def test_same_result_as_line_by_line_on_random_files(tmp_path):
    rng = random.Random(7)
    fast_used = 0
    for case in range(400):
        path = tmp_path / f"r{case}.run"
        path.write_text(random_run_text(rng))
        want, got = line_by_line(path), as_read(path)
        if isinstance(want, str):
            assert got == want
            continue
        assert got == want and list(got.results) == list(want.results)
        assert got.name == want.name
        fast_used += runs._read_columns(path, None) is not None
    assert fast_used > 150  # most well-formed cases went the fast way


def test_ties_and_unsorted_scores_come_out_in_trec_eval_order(tmp_path):
    path = tmp_path / "t.run"
    path.write_text("q1 Q0 a 1 1.0 t\nq1 Q0 c 2 1.0 t\nq1 Q0 b 3 1.0 t\nq1 Q0 z 4 0.5 t\n"
                    "q2 Q0 x 1 0.1 t\nq2 Q0 y 2 0.9 t\n")
    fast = runs._read_columns(path, None)
    assert fast is not None
    assert fast.results == {"q1": (("c", 1.0), ("b", 1.0), ("a", 1.0), ("z", 0.5)),
                            "q2": (("y", 0.9), ("x", 0.1))}
    assert fast == runs.read_run(path) == line_by_line(path)


@pytest.mark.parametrize("text", [
    "q1 Q0 a 1 1.0 t\nq1 Q0 a 2 0.5 t\n",  # duplicate item
    "q1 Q0 a 1.5 1.0 t\n",  # a rank that is not a whole number
    "q1 Q0 caf\u00a0e 1 1.0 t\n",  # a no-break space, which str.split() splits on
    "q1 Q0 a 1 nan t\n",  # NaN score
    "q1 Q0 a 1 inf t\n",  # infinite score
])
def test_unusual_files_take_the_careful_path(tmp_path, text):
    path = tmp_path / "u.run"
    path.write_text(text)
    assert runs._read_columns(path, None) is None
    assert as_read(path) == line_by_line(path)


@pytest.mark.parametrize("text", [
    "q1  Q0 a 1 1.0 t\n q1 Q0 b 2 0.5 t \n\t\n",  # doubled, leading and trailing spaces
    "q1 Q0 a 1 1.0 t\nq1\tQ0 b 2 0.5\tt",  # tab and space mixed, no final newline
    "q2 Q0 a 1 1.0 t\nq1 Q0 a 1 1.0 t\nq2 Q0 b 2 0.5 t\n",  # query lines not contiguous
    "q1 Q0 caf\u00e9 1 1.0 t\n",  # non-ASCII item id
    "\ufeffq1 Q0 a 1 1.0 t\n",  # byte-order mark (dropped by both readers)
])
def test_whitespace_and_order_variants_are_read_as_columns(tmp_path, text):
    path = tmp_path / "v.run"
    path.write_text(text)
    fast = runs._read_columns(path, None)
    assert fast is not None
    assert fast == line_by_line(path) and list(fast.results) == list(line_by_line(path).results)
