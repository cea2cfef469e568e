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
