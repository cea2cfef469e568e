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



# --- review sheets and agreement between judgment sets (review.py, agreement.py) -----------

@main.group()
def review() -> None:
    """Review judgments in a spreadsheet and bring the verdicts back as qrels.

    \b
    Example:
      trawl review export silver.qrels silver.queries.tsv corpora/quillfern.jsonl -o review.csv
      trawl review import review.csv -c corpora/quillfern.jsonl -o reviewed.qrels
    """


@review.command("export")
@click.argument("qrels", type=click.Path(dir_okay=False))
@click.argument("queries", type=click.Path(dir_okay=False))
@click.argument("catalogue", type=click.Path(dir_okay=False))
@click.option("-o", "--output", required=True, type=click.Path(dir_okay=False),
              help="Sheet to write: .csv, or .xlsx with a drop-down for the verdict. With "
                   "--reviewers N: one sheet per reviewer, named STEM-1 ... STEM-N.")
@click.option("--runs", "run_paths", multiple=True, type=click.Path(dir_okay=False),
              metavar="RUN", help="Run whose unjudged top results are added for review "
                                  "(repeat for several runs).")
@click.option("--pairs", type=click.Choice(["silver", "pooled", "both"]), default=None,
              help="Rows to judge: judged pairs (confirm or correct), unjudged pooled run "
                   "results, or both. [default: silver; both with --runs]")
@click.option("--depth", type=int, default=10, show_default=True,
              help="Pool this many top results of each run.")
@click.option("--sample", type=int, default=None, metavar="N",
              help="Review N queries drawn at random, stratified by destination type.")
@click.option("--reviewers", type=int, default=1, show_default=True,
              help="Write one sheet per reviewer; shared rows measure agreement.")
@click.option("--overlap", type=float, default=None, metavar="SHARE",
              help="Share of queries every reviewer gets (with --reviewers). [default: 0.2]")
@click.option("--max-grade", type=int, default=None,
              help="Highest grade reviewers may give. [default: highest in QRELS]")
@click.option("--provenance", type=click.Path(dir_okay=False), default=None,
              help="Synthesis provenance (JSONL) for the query style column. [default: "
                   "QRELS with .jsonl in place of .qrels, if it exists]")
@click.option("--no-scrub", is_flag=True,
              help="Keep query text as it is (default: e-mails, phone numbers, long digit "
                   "runs and postcodes are replaced by placeholders).")
@seed_option
@json_option
def review_export(qrels: str, queries: str, catalogue: str, output: str,
                  run_paths: tuple[str, ...], pairs: str | None, depth: int,
                  sample: int | None, reviewers: int, overlap: float | None,
                  max_grade: int | None, provenance: str | None, no_scrub: bool, seed: int,
                  as_json: bool) -> None:
    """Write a review sheet: one row per (query, item) to judge, with the query, the
    item's type, title, snippet and link, the silver grade and an empty verdict column.

    Open it in a spreadsheet program, fill the verdict column (ok, no, or a grade; the
    notes at the top explain them) and bring it back with 'trawl review import'.

    \b
    Example:
      trawl review export silver.qrels silver.queries.tsv corpora/quillfern.jsonl \\
          -o review.csv --runs minilm.run --runs bm25.run --sample 40 --reviewers 2
    """
    from pathlib import Path

    from .catalogue import load_catalogue
    from .judgments import read_qrels
    from .queries import read_queries
    from .review import export_sheet, read_styles
    from .runs import read_run

    if provenance is None and Path(qrels).suffix == ".qrels" \
            and Path(qrels).with_suffix(".jsonl").is_file():
        provenance = str(Path(qrels).with_suffix(".jsonl"))
    summary = export_sheet(
        read_qrels(qrels), read_queries(queries), load_catalogue(catalogue), output,
        runs=[read_run(r) for r in run_paths], pairs=pairs, depth=depth, sample=sample,
        reviewers=reviewers, overlap=overlap, max_grade=max_grade,
        styles=read_styles(provenance) if provenance else None, scrub_queries=not no_scrub,
        seed=seed)
    if as_json:
        emit_json({**summary.as_dict(), "provenance": provenance})
        return
    for s in summary.sheets:
        click.echo(f"wrote {s.path}: {s.silver_rows + s.pooled_rows} rows ({s.silver_rows} "
                   f"silver, {s.pooled_rows} pooled) for {s.queries} queries")
    if summary.overlap_queries:
        click.echo(f"{summary.overlap_queries} queries are in every sheet, for reviewer "
                   "agreement")
    click.echo("queries per destination type: "
               + ", ".join(f"{t} {n}" for t, n in summary.queries_per_type.items()))
    if provenance:
        click.echo(f"query styles from {provenance}")
    removed = {k: v for k, v in summary.scrubbed.items() if v}
    if not no_scrub:
        click.echo("scrubbed from query text: "
                   + (", ".join(f"{v} {k}" for k, v in removed.items()) or "nothing found"))
    if summary.skipped_unknown_items:
        click.echo(f"warning: {summary.skipped_unknown_items} pooled run result(s) name items "
                   "not in the catalogue; left out", err=True)


@review.command("import")
@click.argument("sheets", nargs=-1, required=True, type=click.Path(dir_okay=False))
@click.option("-c", "--catalogue", required=True, type=click.Path(dir_okay=False),
              help="Catalogue the sheets were made from (item ids are checked against it).")
@click.option("-o", "--output", required=True, type=click.Path(dir_okay=False),
              help="Reviewed qrels to write.")
@click.option("--base", type=click.Path(dir_okay=False), default=None,
              help="Judgments to merge into (e.g. the full silver qrels when the sheet holds "
                   "a sample); pairs no sheet holds are kept.")
@json_option
def review_import(sheets: tuple[str, ...], catalogue: str, output: str, base: str | None,
                  as_json: bool) -> None:
    """Read filled review sheets back and write reviewed qrels.

    Merge rule per (query, item): verdicts become grades (ok = the silver grade, no = 0);
    several reviewers' grades are merged by their median, rounded down; unreviewed silver
    rows keep the silver grade; unreviewed pooled rows add nothing. Reports silver
    precision with 95% Wilson intervals per destination type and query style, the
    relevant items pooling found, and Cohen's kappa between reviewers who shared rows.

    \b
    Example:
      trawl review import review-1.csv review-2.csv -c corpora/quillfern.jsonl \\
          --base silver.qrels -o reviewed.qrels
    """
    from .catalogue import load_catalogue
    from .judgments import read_qrels, write_qrels
    from .review import import_sheets

    result = import_sheets(sheets, load_catalogue(catalogue),
                           base=read_qrels(base) if base else None)
    write_qrels(output, result.qrels)
    rep = result.report
    if as_json:
        emit_json({**rep.as_dict(), "output": output})
        return
    for s in rep.sheets:
        click.echo(f"{s.path}: {s.rows} rows, {s.filled} filled, {s.left} left")
    n = sum(len(v) for v in result.qrels.values())
    click.echo(f"wrote {output}: {n} judgments for {len(result.qrels)} queries "
               f"({rep.reviewed} of {rep.pairs} sheet pairs reviewed, "
               f"{rep.pairs - rep.reviewed} left)")
    click.echo()
    click.echo("silver precision: share of reviewed silver positives still relevant after "
               "review, with 95% Wilson interval")
    groups = [("all", rep.silver_precision)]
    groups += [(f"type {t}", p) for t, p in rep.precision_by_type.items()]
    groups += [(f"style {s}", p) for s, p in rep.precision_by_style.items()]
    click.echo(table([[g, p.successes, p.n, _share(p.value), _interval(p.low, p.high)]
                      for g, p in groups],
                     ["group", "kept", "reviewed", "precision", "95% interval"], "lrrrr"))
    click.echo()
    found = ", ".join(f"{t} {k}" for t, k in rep.pooled_relevant_by_type.items())
    click.echo(f"pooled rows: {rep.pooled_reviewed} reviewed, {rep.pooled_relevant} relevant "
               "item(s) the judgments had missed" + (f" ({found})" if found else ""))
    for a in rep.agreement:
        click.echo(f"reviewers {a.sheet_a} and {a.sheet_b}: {a.n} shared rows, Cohen's kappa "
                   f"{_share(a.kappa)}, grade-weighted (linear) {_share(a.kappa_linear)}")
    if rep.disagreements:
        click.echo(f"{len(rep.disagreements)} disagreement(s) (grades per sheet -> merged):")
        for d in rep.disagreements[:MAX_WARNINGS_SHOWN]:
            grades = ", ".join(f"{p} {g}" for p, g in d.grades.items())
            click.echo(f"  {d.qid} {d.item_id}: {d.query!r} / {d.title!r}: {grades} "
                       f"-> {d.final}")
        if len(rep.disagreements) > MAX_WARNINGS_SHOWN:
            click.echo(f"  ... and {len(rep.disagreements) - MAX_WARNINGS_SHOWN} more "
                       "(--json lists all)")


def _share(x: float) -> str:
    return "n/a" if x != x else f"{x:.3f}"


def _interval(low: float, high: float) -> str:
    return "n/a" if low != low else f"{low:.3f}-{high:.3f}"


@main.command()
@click.argument("qrels_a", type=click.Path(dir_okay=False))
@click.argument("qrels_b", type=click.Path(dir_okay=False))
@click.argument("runs", nargs=-1, required=True, type=click.Path(dir_okay=False))
@click.option("-m", "--metric", default="ndcg@10", show_default=True,
              help="Metric the systems are ranked by.")
@click.option("--resamples", type=int, default=2000, show_default=True,
              help="Bootstrap resamples over queries for the intervals (0: none).")
@seed_option
@json_option
def agree(qrels_a: str, qrels_b: str, runs: tuple[str, ...], metric: str, resamples: int,
          seed: int, as_json: bool) -> None:
    """Do two judgment sets (silver vs reviewed, silver vs human) rank systems alike?

    Scores each run under both sets, then gives Kendall's tau-b and Spearman's rho
    between the two system rankings with 95% bootstrap intervals over queries (shared
    queries are drawn together for both sets), and the pairs of systems whose order
    flips. High tau means the cheaper set can be trusted to choose between systems.

    \b
    Example:
      trawl agree silver.qrels qrels/quillfern-gold.qrels minilm.run bm25.run fused.run
    """
    from .agreement import agree as agree_sets
    from .judgments import read_qrels
    from .runs import read_run

    res = agree_sets(read_qrels(qrels_a), read_qrels(qrels_b), [read_run(r) for r in runs],
                     metric=metric, resamples=resamples, seed=seed)
    if as_json:
        emit_json({**res.as_dict(), "qrels_a": qrels_a, "qrels_b": qrels_b})
        return
    click.echo(f"{metric} under A = {qrels_a} ({res.queries_a} queries) and "
               f"B = {qrels_b} ({res.queries_b} queries); {res.shared} queries in both")
    click.echo(table([[s.run, s.score_a, _rank(s.rank_a), s.score_b, _rank(s.rank_b)]
                      for s in res.systems], ["run", "A", "rank A", "B", "rank B"]))
    click.echo()
    ci = (f"{100 * res.confidence:.0f}% bootstrap interval, {res.resamples} resamples over "
          f"queries, seed {res.seed}") if res.resamples else "no interval (--resamples 0)"
    click.echo(table([["Kendall's tau-b", _share(res.tau.value), _interval(res.tau.low,
                                                                           res.tau.high)],
                      ["Spearman's rho", _share(res.rho.value), _interval(res.rho.low,
                                                                          res.rho.high)]],
                     ["agreement", "value", "interval"], "lrr"))
    click.echo(f"({ci})")
    if len(res.systems) < 4:
        click.echo(f"note: with {len(res.systems)} systems a rank correlation can take only a "
                   "few values; add runs for a finer answer")
    click.echo()
    if not res.flips:
        click.echo("no pair of systems changes order between A and B")
    else:
        click.echo(f"{len(res.flips)} pair(s) change order (better under A, worse under B):")
        for f in res.flips:
            click.echo(f"  {f.first} vs {f.second}: {f.diff_a:+.3f} under A, "
                       f"{f.diff_b:+.3f} under B")
    click.echo("Scores under silver (machine-made) judgments are estimates; tau and rho say "
               "how far they can be trusted to choose between systems.")


def _rank(r: float) -> str:
    return f"{r:g}"

if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
