"""Command-line interface: a thin click layer over the library.

Each command opens its inputs, makes one public library call and formats the result.
User errors (``TrawlError``) become ``error: ...`` on stderr and exit code 2.
"""

from __future__ import annotations

import functools
import json
import sys
from typing import Any

import click

from . import __version__
from .errors import TrawlError


class _Group(click.Group):
    """Turns library errors into one-line messages with exit code 2."""

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except TrawlError as exc:
            click.echo(f"error: {exc}", err=True)
            ctx.exit(2)


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"],
                                           "max_content_width": 100})
@click.version_option(__version__, prog_name="trawl")
def main() -> None:
    """Evaluate embedding-based search over a mixed catalogue before anyone has
    labelled a query.

    \b
    Example:
      trawl check corpora/quillfern.jsonl
      trawl demo -o demo-out
    """


# --- shared options --------------------------------------------------------------------------

def json_option(f):
    return click.option("--json", "as_json", is_flag=True,
                        help="Print machine-readable JSON on stdout instead of a table.")(f)


def quiet_option(f):
    return click.option("-q", "--quiet", is_flag=True, help="No progress bars.")(f)


def seed_option(f):
    return click.option("--seed", type=int, default=0, show_default=True,
                        help="Seed for every random choice (same seed, same output).")(f)


def template_option(f):
    return click.option("--template", default=None, metavar="PATTERN",
                        help="Text each item is embedded with, as a format pattern over item "
                             "fields (default: '{title}\\n{text}').")(f)


def emit_json(obj: Any) -> None:
    click.echo(json.dumps(obj, indent=2, ensure_ascii=False, sort_keys=False))


def table(rows: list[list[Any]], header: list[str], align: str | None = None) -> str:
    """A plain aligned text table; ``align`` is one char per column ('l' or 'r')."""
    cells = [[str(h) for h in header]] + [[_fmt(c) for c in r] for r in rows]
    widths = [max(len(r[i]) for r in cells) for i in range(len(header))]
    align = align or "l" + "r" * (len(header) - 1)
    out = []
    for k, r in enumerate(cells):
        out.append("  ".join(c.ljust(w) if a == "l" else c.rjust(w)
                             for c, w, a in zip(r, widths, align)).rstrip())
        if k == 0:
            out.append("  ".join("-" * w for w in widths))
    return "\n".join(out)


def _fmt(c: Any) -> str:
    if isinstance(c, float):
        return f"{c:.3f}"
    return str(c)


MAX_WARNINGS_SHOWN = 20

# --- commands --------------------------------------------------------------------------------

@main.command()
@click.argument("catalogue", type=click.Path(dir_okay=False))
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
    from .catalogue import check_catalogue, load_catalogue

    report = check_catalogue(load_catalogue(catalogue, template), unit=lengths)
    if as_json:
        emit_json(report.as_dict())
        return
    click.echo(f"{report.path}: {report.items} items, {len(report.types)} destination types, "
               f"fingerprint {report.fingerprint}")
    click.echo()
    click.echo(table([[t, n, f"{100 * n / report.items:.1f}%"] for t, n in report.types.items()],
                     ["type", "items", "share"]))
    click.echo()
    pct = report.length_percentiles
    click.echo(f"text length ({report.length_unit}): "
               + "  ".join(f"{k} {v:.0f}" for k, v in pct.items()))
    if report.warnings:
        click.echo()
        click.echo(f"{len(report.warnings)} warning(s):")
        for w in report.warnings[:MAX_WARNINGS_SHOWN]:
            click.echo(f"  warning: {w}")
        if len(report.warnings) > MAX_WARNINGS_SHOWN:
            click.echo(f"  ... and {len(report.warnings) - MAX_WARNINGS_SHOWN} more "
                       "(--json lists all)")


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
