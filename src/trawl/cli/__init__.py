"""Command-line interface: a thin click layer over the library.

Each command reads its options, makes one public library call and prints what comes
back through ``report.text``. User errors (``TrawlError``) become ``error: ...`` on
stderr and exit code 2. The commands live in one module per area, registered below.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from typing import Any

import click

from .. import __version__
from ..errors import TrawlError, UsageError


class _Group(click.Group):
    """Turns library errors, and click's own complaints about a command's options and
    arguments, into one-line messages with exit code 2."""

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except TrawlError as exc:
            click.echo(f"error: {exc}", err=True)
            ctx.exit(2)
        except click.exceptions.NoArgsIsHelpError:  # `trawl review` alone: its help
            raise
        except click.UsageError as exc:  # a missing option, a value out of range, ...
            where = (exc.ctx.command_path if exc.ctx is not None else
                     " ".join(filter(None, (ctx.command_path, ctx.invoked_subcommand))))
            click.echo(f"error: {exc.format_message().rstrip('.')}; see "
                       f"'{where} --help'", err=True)
            ctx.exit(2)


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"],
                                           "max_content_width": 100})
@click.version_option(__version__, prog_name="trawl")
def main() -> None:
    """Shortlist and rank encoders for a catalogue's search box from silver (machine-made)
    judgments; confirm the choice with a reviewed sample or human judgments before shipping.

    \b
    Example:
      trawl check corpora/quillfern.jsonl
      trawl demo -o demo-out
    """


# --- shared options --------------------------------------------------------------------------

def flag(*names: str, help: str) -> Callable:
    return click.option(*names, is_flag=True, help=help)


json_option = flag("--json", "as_json",
                   help="Print machine-readable JSON on stdout instead of a table.")
quiet_option = flag("-q", "--quiet", help="No progress bars.")
seed_option = click.option("--seed", type=int, default=0, show_default=True,
                           help="Seed for every random choice (same seed, same output).")


def _threads(ctx: click.Context, param: click.Parameter, value: int | None) -> int | None:
    if value is not None and value < 1:  # refused while parsing, before any work
        raise UsageError(f"threads={value} must be >= 1; give --threads 1 or more (default "
                         "1: one compute thread per query, as an app replica serves)")
    return value


threads_option = click.option(
    "--threads", type=int, default=1, show_default=True, metavar="N", callback=_threads,
    help="Compute threads (torch, onnxruntime and faiss) while timing single queries; give "
         "what a deployed replica will have. Batch throughput always uses every core. The "
         "latency file records both counts and the load average.")
template_option = click.option(
    "--template", default=None, metavar="PATTERN",
    help="Text each item is embedded with, as a format pattern over item fields (default: "
         "'{title}\\n{text}').")
metrics_option = click.option(
    "-m", "--metric", "metrics", multiple=True, metavar="METRIC",
    help="Metric to compute; repeat for several. Forms: ndcg@K, mrr@K, recall@K, "
         "precision@K, hit@K, map, map@K, in any case, or the usual P@K, R@K, RR@K, AP, "
         "Success@K. Default: ndcg@10, mrr@10, recall@10, recall@100.")
cache_dir_option = click.option(
    "--cache-dir", type=click.Path(file_okay=False), default=None, metavar="DIR",
    help="Embedding cache folder (default: $TRAWL_CACHE_DIR, else ~/.cache/trawl).")
results_option = click.option(
    "--results", type=click.IntRange(min=1), default=None, metavar="N",
    help="Results kept per query (default: 100, or every item when the catalogue holds "
         "fewer); more than the catalogue holds is an error naming its size.")
partial_option = flag(
    "--partial-overlap", help="Accept runs that answer under half of the judged queries, or "
                              "whose items are mostly not in the catalogue (a deliberate "
                              "partial overlap; they are still warned about). A run sharing "
                              "no query with the judgments is refused either way.")
names_option = click.option(
    "--name", "names", multiple=True, metavar="NAME",
    help="Name of each RUN in the tables, in the order the RUN files are given; repeat once "
         "per run (default: the run's tag, or its file name when tags repeat).")
silver_option = flag("--silver", help="Mark the figures as estimates from silver (machine-made) "
                                      "judgments; automatic when a `trawl synth` provenance "
                                      "file PREFIX.jsonl sits beside PREFIX.qrels.")
retime_option = flag("--retime", help="Search and time every system again, even those whose "
                                      "index, queries, depth and threads are unchanged since "
                                      "the last run into OUTPUT.")
no_scrub_option = flag("--no-scrub", help="Keep query text as it is (default: e-mails, phone "
                                          "numbers, long digit runs and postcodes are replaced "
                                          "by placeholders).")


def resamples_option(default: int, minimum: int, help: str) -> Callable:
    return click.option("--resamples", type=click.IntRange(min=minimum), default=default,
                        show_default=True, help=help)


def catalogue_option(required: bool, help: str) -> Callable:
    """The catalogue as context for runs, judgments or sheets; commands whose job is the
    catalogue itself (check, index, synth, eval) take it as their first argument."""
    return click.option("-c", "--catalogue", required=required,
                        type=click.Path(dir_okay=False), help=help)


def in_file(name: str, **kw: Any) -> Callable:
    return click.argument(name, type=click.Path(dir_okay=False), **kw)


def out_option(*names: str, folder: bool = False, **kw: Any) -> Callable:
    kind = click.Path(file_okay=False) if folder else click.Path(dir_okay=False)
    return click.option(*(names or ("-o", "--output")), type=kind, **kw)


# --- printing --------------------------------------------------------------------------------

def emit_json(obj: Any) -> None:
    click.echo(json.dumps(obj, indent=2, ensure_ascii=False, sort_keys=False))


def show(data: Any, as_json: bool, render: Callable[[Any], str]) -> None:
    """``data`` as JSON, or as the text ``render`` makes of it."""
    if as_json:
        emit_json(data)
    else:
        click.echo(render(data))


def echo_err(lines: list[str]) -> None:
    for line in lines:
        click.echo(line, err=True)


def step(quiet: bool) -> Callable[[str], None] | None:
    """Step lines on stderr (so --json output stays clean), silenced by --quiet."""
    return None if quiet else (lambda msg: click.echo(msg, err=True))


def reject(conflicts: list[tuple[bool, str]]) -> None:
    """Refuse the first conflicting combination of flags before any work starts."""
    for bad, message in conflicts:
        if bad:
            raise UsageError(message)


from . import checks, evaluation, judging, retrieval, scoring  # noqa: E402,F401  (registers commands)
