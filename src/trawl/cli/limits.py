"""The options that shape the decision (eval, demo and compare share them)."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import click

from ..decision import DEFAULT_HEADLINE, DEFAULT_MARGIN, Limits


def limits_options(f: Callable) -> Callable:
    """--max-latency-ms, --max-index-mb, --margin and --headline."""
    for option in reversed([
        click.option("--max-latency-ms", type=click.FloatRange(0, min_open=True),
                     default=None, metavar="MS",
                     help="Decision: p95 latency (one query at a time) a system may have."),
        click.option("--max-index-mb", type=click.FloatRange(0, min_open=True),
                     default=None, metavar="MB",
                     help="Decision: index size on disk a system may have."),
        click.option("--margin", type=click.FloatRange(0, 1, max_open=True),
                     default=DEFAULT_MARGIN, show_default=True, metavar="LOSS",
                     help="Decision: quality loss of the headline metric the team accepts "
                          "for a cheaper system."),
        click.option("--headline", default=None, metavar="METRIC",
                     help="Decision: the metric it rests on, any metric trawl computes "
                          f"(default: the first metric asked for, else {DEFAULT_HEADLINE})."),
    ]):
        f = option(f)
    return f


def limits_from(kw: dict[str, Any]) -> Limits:
    """The Limits from the options above, taken out of a command's keyword arguments."""
    return Limits(kw.pop("max_latency_ms"), kw.pop("max_index_mb"), kw.pop("margin"),
                  kw.pop("headline"))
