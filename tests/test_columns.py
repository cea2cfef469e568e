"""The columnar run reader across block boundaries: files read a few dozen bytes at a
time (lines split between reads, dictionaries unified across blocks, a line longer
than the buffer) give what the line-by-line reader gives."""

from __future__ import annotations

import random

import pytest

from tests.test_read_run_fast import as_read, line_by_line, random_run_text
from trawl import columns, runs


@pytest.fixture
def tiny_blocks(monkeypatch):
    monkeypatch.setattr(columns, "SCAN_BLOCK", 40)


def test_small_blocks_read_as_line_by_line(tmp_path, tiny_blocks):
    rng = random.Random(11)
    for case in range(150):
        path = tmp_path / f"r{case}.run"
        path.write_text(random_run_text(rng))
        want, got = line_by_line(path), as_read(path)
        assert got == want
        if not isinstance(want, str):
            assert list(got.results) == list(want.results) and got.name == want.name


def test_a_line_longer_than_the_buffer(tmp_path, tiny_blocks):
    path = tmp_path / "long.run"
    long_id = "d" * 300
    path.write_text(f"q1 Q0 a 1 2.0 t\nq1 Q0 {long_id} 2 1.0 t\nq2 Q0 a 1 1.0 t\n")
    fast = runs._read_columns(path, None)
    assert fast is not None
    assert fast.results == {"q1": (("a", 2.0), (long_id, 1.0)), "q2": (("a", 1.0),)}


def test_a_byte_order_mark_inside_the_file_is_left_to_the_careful_reader(tmp_path,
                                                                         tiny_blocks):
    path = tmp_path / "bom.run"
    path.write_text("".join(f"q1 Q0 d{i} {i} 2.0 t\n" for i in range(3)) + "\ufeffq2 Q0 a 1 1.0 t\n")
    assert runs._read_columns(path, None) is None  # pyarrow would drop it at a block start
    assert "\ufeffq2" in runs.read_run(path).results


def test_repeating_scores_are_coded_and_come_back_exactly():
    import numpy as np

    values = np.array([0.0, -0.0, 1.5, 0.1 + 0.2, 1e-300, 1.5] * 100)
    coded = columns.Scores(values)
    assert coded.nbytes < values.nbytes / 3  # 2-byte codes into a table of 5 values
    back = coded.between(0, 600)
    assert back == values.tolist() and [str(x) for x in back] == [str(x) for x in values]
    many = np.arange(70_000, dtype=np.float64) / 7  # too many distinct values to code
    assert columns.Scores(many).between(69_998, 70_000) == many[69_998:].tolist()
