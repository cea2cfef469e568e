"""Every command has --help that ends with an example."""

from __future__ import annotations

import pytest

from trawl.cli import main

from .conftest import invoke


def _commands(group, prefix=()):
    for name, cmd in group.commands.items():
        path = prefix + (name,)
        yield path
        if hasattr(cmd, "commands"):
            yield from _commands(cmd, path)


@pytest.mark.parametrize("path", [()] + list(_commands(main)), ids=lambda p: " ".join(p) or "trawl")
def test_help_shows_an_example(path):
    result = invoke(list(path) + ["--help"])
    assert result.exit_code == 0
    assert "Example:" in result.stdout
    example = result.stdout.split("Example:", 1)[1]
    assert "trawl " in example


# Options whose value is a file the command writes (any path will do there).
_WRITES = {"-o", "--output", "--csv", "--per-query"}
_FILE_ENDINGS = (".jsonl", ".csv", ".tsv", ".qrels", ".run", ".xlsx", ".parquet", ".json")


def _example_lines(text: str) -> list[str]:
    block = text.split("Example:", 1)[1].split("\nOptions:", 1)[0].replace("\\\n", " ")
    return [" ".join(line.split()) for line in block.splitlines()
            if line.strip().startswith("trawl ")]


def _read_paths(line: str) -> list[str]:
    """Arguments of an example line that name a file or folder the command reads."""
    words = line.split()
    out = []
    for before, word in zip(words, words[1:]):
        if before in _WRITES or word.startswith("-"):
            continue
        if word.endswith(_FILE_ENDINGS) or "/" in word and ":" not in word:
            out.append(word)
    return out


def _made_by_the_tour() -> set[str]:
    """Paths the README tour names or writes (``-o silver/qf`` writes silver/qf.*)."""
    from .test_readme_tour import tour_commands

    named, prefixes = set(), []
    for line in tour_commands():
        words = line.split()
        named.update(words)
        prefixes += [w for before, w in zip(words, words[1:]) if before in _WRITES]
    return named | {p + ext for p in prefixes for ext in (".qrels", ".queries.tsv", ".jsonl")}


@pytest.mark.parametrize("path", list(_commands(main)), ids=" ".join)
def test_an_example_runs_on_the_bundled_files_after_the_tour(path):
    """A newcomer copies the first example that looks like their checkout: at least one
    example of every command reads only files of the checkout or ones the README tour
    made, so it runs as written (placeholders such as items.jsonl are for the others)."""
    from .conftest import ROOT

    known = _made_by_the_tour()
    lines = _example_lines(invoke(list(path) + ["--help"]).stdout)
    runnable = [line for line in lines
                if all(p in known or (ROOT / p).exists() for p in _read_paths(line))]
    assert runnable, f"no example of '{' '.join(path)}' runs after the tour: {lines}"


@pytest.mark.parametrize("args, says", [
    (["misses", "a.qrels", "b.run"], "error: Missing option '-c' / '--catalogue'; see "
                                     "'trawl misses --help'"),
    (["misses", "a.qrels", "b.run", "-c", "c.jsonl", "--cutoff", "0"],
     "error: Invalid value for '--cutoff': 0 is not in the range x>=1; see "
     "'trawl misses --help'"),
    (["score", "--metric"], "error: Option '--metric' requires an argument; see "
                            "'trawl score --help'"),
    (["review", "import"], "error: Missing argument 'SHEETS...'; see "
                           "'trawl review import --help'"),
    (["scroe"], "error: No such command 'scroe'"),
])
def test_option_mistakes_are_one_error_line_with_exit_2(args, says):
    """The project's rule for user errors (one 'error:' line, exit 2) holds for mistakes
    click finds while parsing, not only for the library's; each points to the help."""
    result = invoke(args, prog_name="trawl")
    assert result.exit_code == 2
    assert result.stderr.startswith(says) and result.stderr.count("\n") == 1
    assert "Usage:" not in result.stderr


def test_a_group_alone_still_shows_its_help():
    result = invoke(["review"])
    assert "Usage:" in result.output and "export" in result.output
