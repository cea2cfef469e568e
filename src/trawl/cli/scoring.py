"""`trawl score`, `compare` and `misses`: what a set of runs achieves against judgments."""

from __future__ import annotations

from collections.abc import Callable
from types import SimpleNamespace
from typing import Any

import click

from ..report import text
from . import (catalogue_option, in_file, json_option, main, metrics_option, names_option,
               no_scrub_option, partial_option, quiet_option, reject, resamples_option,
               seed_option, show, silver_option)
from .limits import limits_from, limits_options


def csv_option(help: str) -> Callable:
    return click.option("--csv", "csv_path", type=click.Path(dir_okay=False), default=None,
                        metavar="PATH", help=help)


def _metrics(names: tuple[str, ...]):
    from ..metrics import DEFAULT_METRICS, parse_metrics

    return parse_metrics(names or DEFAULT_METRICS)


def _show(qrels: str, flagged: bool, report: Any, as_json: bool,
          render: Callable[[dict], str]) -> None:
    """The report as JSON (with the judgments' path and kind) or as text, followed by
    the silver note when the judgments are silver."""
    from ..silver import is_silver, silver_note

    silver = flagged or is_silver(qrels)
    show({"qrels": qrels, "silver": silver, **report.as_dict()}, as_json, render)
    if silver and not as_json:
        click.echo()
        click.echo(silver_note(qrels))


@main.command()
@in_file("qrels")
@in_file("runs", nargs=-1, required=True)
@names_option
@catalogue_option(False, "Catalogue of the judged items: adds means per destination type.")
@metrics_option
@resamples_option(0, 0, "Bootstrap resamples for a 95% interval around each mean. Default 0 "
                        "(no interval): score is the quick look, and whether two runs differ "
                        "is compare's question, which resamples by default.")
@seed_option
@click.option("--per-query", "per_query_path", type=click.Path(dir_okay=False), default=None,
              metavar="PATH", help="Write the per-query scores to PATH (.csv or .json).")
@csv_option("Write the table of means (one row per run, metric and type) to PATH as CSV.")
@partial_option
@silver_option
@json_option
def score(qrels: str, runs: tuple[str, ...], names: tuple[str, ...], catalogue: str | None,
          metrics: tuple[str, ...], resamples: int, seed: int, per_query_path: str | None,
          csv_path: str | None, partial_overlap: bool, silver: bool, as_json: bool) -> None:
    """Score TREC runs against qrels: means over all queries and, with --catalogue, per
    destination type.

    Queries in the qrels that a run lacks score 0 and are warned about, as are run
    results naming items missing from the catalogue; duplicate run lines are errors.
    Scores under silver (machine-made) judgments are estimates.

    \b
    Example:
      trawl score qrels/quillfern-gold.qrels runs/minilm.run runs/bm25.run \\
          -c corpora/quillfern.jsonl
      trawl score silver.qrels minilm.run -m ndcg@10 -m hit@1 --per-query scores.csv
    """
    from ..files import check_writable
    from ..inputs import read_scoring_inputs
    from ..pipeline.outputs import SCORE_COLUMNS, per_query_columns, write_rows
    from ..scores import score_runs
    from ..tables import write_csv

    ms = _metrics(metrics)
    reject([(per_query_path is not None and not per_query_path.endswith((".csv", ".json")),
             f"--per-query {per_query_path}: name a .csv or .json file")])
    for path, what in ((per_query_path, "per-query table"), (csv_path, "score table")):
        if path is not None:
            check_writable(path, what)  # before scoring
    got = read_scoring_inputs(qrels, runs, names, catalogue, partial_overlap)
    report = score_runs(got.qrels, list(got.runs), ms, got.catalogue, resamples=resamples,
                        seed=seed)
    if per_query_path is not None:
        write_rows(per_query_path, report.per_query_rows(), per_query_columns(report.metrics))
    if csv_path is not None:
        write_csv(csv_path, report.score_rows(), SCORE_COLUMNS)
    _show(qrels, silver, report, as_json, text.scores)


@main.command()
@in_file("qrels")
@in_file("runs", nargs=-1, required=True)
@click.option("--baseline", default=None, metavar="RUN",
              help="Run every other run is compared with: a run's name or one of the RUN "
                   "files (default: the first RUN).")
@names_option
@catalogue_option(False, "Catalogue of the judged items: adds comparisons per destination "
                         "type.")
@metrics_option
@resamples_option(10000, 1, "Bootstrap resamples and random sign flips. Default 10,000: "
                            "p-values near the significance level, after Holm's correction, "
                            "need that many to be stable to the second decimal.")
@seed_option
@click.option("--interval", "method", type=click.Choice(["percentile", "bca"]),
              default="percentile", show_default=True,
              help="Bootstrap interval: percentile, or bias-corrected and accelerated.")
@click.option("--alpha", type=click.FloatRange(0, 1, min_open=True, max_open=True),
              default=0.05, show_default=True,
              help="Significance level; the intervals are at 1 - alpha.")
@click.option("--long", "long_table", is_flag=True,
              help="One line per comparison with interval, p-values and effect size.")
@csv_option("Write every comparison row to PATH as CSV.")
@partial_option
@silver_option
@limits_options
@json_option
@quiet_option
def compare(qrels: str, runs: tuple[str, ...], baseline: str | None, names: tuple[str, ...],
            catalogue: str | None, partial_overlap: bool,
            metrics: tuple[str, ...], resamples: int, seed: int, method: str, alpha: float,
            long_table: bool, csv_path: str | None, silver: bool, as_json: bool,
            quiet: bool, **limits: float | str | None) -> None:
    """Compare runs with a baseline on the same queries: mean difference per metric,
    paired bootstrap interval, p-values from the paired bootstrap and a sign-flip
    randomisation test, Holm's correction over every comparison shown, and an effect
    size (mean difference over the spread of per-query differences). First comes the
    decision: which run's system to ship within --max-latency-ms and --max-index-mb,
    accepting a loss of --margin on the --headline metric, with latency and index size
    from each RUN.latency.json (trawl search writes it) when present.

    \b
    Example:
      trawl compare qrels/quillfern-gold.qrels runs/bm25.run runs/minilm.run runs/hybrid.run
      trawl compare silver.qrels a.run b.run --baseline b.run -c items.jsonl --long
    """
    from ..compare import CSV_COLUMNS, compare_runs
    from ..decision import decide_runs
    from ..silver import SilverFiles, is_silver
    from ..inputs import read_scoring_inputs
    from ..tables import write_csv

    reject([(long_table and as_json, "--long and --json conflict: --long shapes the table, "
                                     "--json replaces it; drop one"),
            (len(runs) < 2, "compare needs at least two RUN files (a baseline and one more)")])
    ms = _metrics(metrics)
    wanted = limits_from(limits)  # checked before any work
    got = read_scoring_inputs(qrels, runs, names, catalogue, partial_overlap)
    loaded = list(got.runs)
    if baseline in runs:  # a file name: the run read from it
        baseline = loaded[runs.index(baseline)].name
    comp = compare_runs(got.qrels, loaded, ms, baseline, resamples, seed, method,
                        got.catalogue, alpha, quiet)
    verdict = decide_runs(got.qrels, loaded, runs, wanted,
                          silver=silver or is_silver(qrels), resamples=resamples, seed=seed,
                          alpha=alpha, judgment_set=qrels, first_metric=ms[0].name)
    if csv_path is not None:
        write_csv(csv_path, [r.as_dict() for r in comp.rows], CSV_COLUMNS)
    both = SimpleNamespace(as_dict=lambda: {**comp.as_dict(), "decision": verdict.as_dict()})
    beside = SilverFiles.at(qrels.removesuffix(".qrels")).queries  # a silver set's queries
    review = {"qrels": qrels, "queries": str(beside) if beside.is_file() else "QUERIES",
              "catalogue": catalogue or "CATALOGUE"}
    _show(qrels, silver, both, as_json, lambda d: text.decision(d["decision"], **review)
          + "\n\n" + text.comparison(d, long_table))


@main.command()
@in_file("qrels")
@in_file("run")
@catalogue_option(True, "Catalogue of the judged and retrieved items (their types).")
@click.option("--cutoff", type=click.IntRange(min=1), default=10, show_default=True,
              metavar="K", help="Rank cut-off: a query whose first relevant item is below "
                                "rank K is a miss (hit@K counts the others).")
@click.option("--worst", type=click.IntRange(min=0), default=5, show_default=True,
              help="Worst queries listed per destination type.")
@click.option("--queries", "queries_path", type=click.Path(dir_okay=False), default=None,
              help="Queries TSV, to show the text of the worst queries.")
@no_scrub_option
@csv_option("Write the per-type table to PATH as CSV.")
@partial_option
@silver_option
@json_option
def misses(qrels: str, run: str, catalogue: str, cutoff: int, worst: int,
           queries_path: str | None, no_scrub: bool, csv_path: str | None,
           partial_overlap: bool, silver: bool, as_json: bool) -> None:
    """Where a run fails, by destination type of the wanted item: hit@1, hit@k, misses,
    median rank of the first relevant item, the types of what came first instead, and
    the worst queries with the item that won.

    \b
    Example:
      trawl misses qrels/quillfern-gold.qrels runs/minilm.run -c corpora/quillfern.jsonl
      trawl misses silver.qrels bm25.run -c items.jsonl --cutoff 5 --queries silver.queries.tsv
    """
    from ..inputs import read_scoring_inputs
    from ..misses import CSV_COLUMNS, miss_table
    from ..queries import read_queries
    from ..tables import write_csv

    reject([(no_scrub and queries_path is None,
             "--no-scrub applies to query text; it needs --queries")])
    texts = read_queries(queries_path) if queries_path is not None else None
    got = read_scoring_inputs(qrels, [run], (), catalogue, partial_overlap)
    rep = miss_table(got.qrels, got.runs[0], got.catalogue, cutoff, worst, texts,
                     scrub_queries=texts is not None and not no_scrub)
    if csv_path is not None:
        write_csv(csv_path, [r.as_dict() for r in rep.rows], CSV_COLUMNS)
    _show(qrels, silver, rep, as_json, text.misses)
