"""Progress bars only on a terminal: logs and pipes get no carriage-return lines."""

from __future__ import annotations

import io
import os
import sys

import pytest

from trawl.progress import progress, shows_bars


class Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def run_bar(monkeypatch, stream, quiet=False) -> str:
    monkeypatch.setattr(sys, "stderr", stream)
    with progress(5, "comparing", quiet, unit="group") as bar:
        for _ in range(5):
            bar.update(1)
    return stream.getvalue()


def test_no_bar_when_stderr_is_not_a_terminal(monkeypatch):
    assert run_bar(monkeypatch, io.StringIO()) == ""


def test_bar_on_a_terminal_and_none_when_quiet(monkeypatch):
    assert "comparing" in run_bar(monkeypatch, Terminal())
    assert run_bar(monkeypatch, Terminal(), quiet=True) == ""


def test_closed_or_odd_streams_count_as_no_terminal():
    closed = io.StringIO()
    closed.close()
    assert not shows_bars(stream=closed) and not shows_bars(stream=object())  # type: ignore[arg-type]


@pytest.mark.skipif(not hasattr(os, "openpty"), reason="needs a pseudo-terminal")
def test_a_real_pseudo_terminal_counts():
    main, side = os.openpty()
    try:
        with os.fdopen(side, "w") as fh:
            assert shows_bars(stream=fh) and not shows_bars(True, fh)
    finally:
        os.close(main)
