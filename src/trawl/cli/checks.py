"""`trawl check`: is a catalogue fit to search?"""

from __future__ import annotations

import click

from ..report import text
from . import in_file, json_option, main, show, template_option


@main.command()
@in_file("catalogue")
@template_option
@click.option("--lengths", type=click.Choice(["tokens", "words"]), default="tokens",
              show_default=True, help="Unit of the text-length percentiles.")
@json_option
def check(catalogue: str, template: str | None, lengths: str, as_json: bool) -> None:
    """Validate a catalogue and summarise it: items per destination type, text-length
    percentiles and warnings (near-empty items, duplicate titles).

    Exits with code 2 and a one-line 'error: FILE:LINE: FIELD: ...' on invalid input.

    \b
    Example:
      trawl check corpora/quillfern.jsonl
      trawl check items.csv --lengths words --json
    """
    from ..catalogue import check_catalogue, load_catalogue

    report = check_catalogue(load_catalogue(catalogue, template), unit=lengths).as_dict()
    show(report, as_json, text.check)
