"""The README's tour runs as written, in order, from a checkout's files, and names every
command, so a newcomer's first hour never meets a path or an option that does not exist."""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import sys

import click
import pytest

from .conftest import ROOT

# Left out of the run, with the reason: `make demo` has run it already before a reader
# gets here, and from an empty folder it takes minutes (the other lines take seconds each
# once the embedding cache is warm).
SKIPPED = {"trawl demo -o demo-out": "make demo runs it; minutes from an empty folder"}


def tour_commands() -> list[str]:
    """The command lines of the README's Tour code block, without their comments."""
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text.split("\n## Tour\n", 1)[1].split("\n## ", 1)[0]
    block = re.search(r"```sh\n(.*?)```", section, re.S)
    assert block, "the Tour section has no ```sh block"
    lines = [re.split(r"\s{2,}#", line)[0].strip() for line in block.group(1).splitlines()]
    return [line for line in lines if line and not line.startswith("#")]


def cli_commands() -> list[str]:
    """Every command a user can type, with the sub-commands of groups (``review export``)."""
    from trawl.cli import main

    out = []
    for name, command in main.commands.items():
        if isinstance(command, click.Group):
            out += [f"{name} {sub}" for sub in command.commands]
        else:
            out.append(name)
    return out


def test_every_command_appears_in_the_tour():
    tour = tour_commands()
    missing = [c for c in cli_commands()
               if not any(re.match(rf"trawl {re.escape(c)}( |$)", line) for line in tour)]
    assert not missing, f"commands missing from the README tour: {missing}"


def test_tour_lines_are_trawl_commands():
    for line in tour_commands():
        assert line.startswith("trawl "), line


@pytest.mark.slow
def test_readme_tour_runs_as_written(tmp_path):
    """Each line in order, in a folder laid out like a fresh clone (corpora/, qrels/,
    README.md), with the installed ``trawl`` on PATH; every one must exit 0."""
    for folder in ("corpora", "qrels"):
        shutil.copytree(ROOT / folder, tmp_path / folder)
    env = dict(os.environ, PATH=f"{os.path.dirname(sys.executable)}{os.pathsep}"
                                f"{os.environ.get('PATH', '')}")
    ran = []
    for line in tour_commands():
        if line in SKIPPED:
            continue
        done = subprocess.run(line, shell=True, cwd=tmp_path, env=env, capture_output=True,
                              text=True, timeout=1800)
        assert done.returncode == 0, f"README tour line failed: {line}\n{done.stderr[-2000:]}"
        ran.append(line)
    assert len(ran) == len(tour_commands()) - len(SKIPPED)
    assert (tmp_path / "eval-out" / "report.html").is_file()
    assert (tmp_path / "reviewed.qrels").read_text().strip()
