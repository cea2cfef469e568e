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
from .errors import TrawlError, UsageError


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


def threads_option(f):
    return click.option("--threads", type=int, default=None, metavar="N",
                        help="Compute threads (torch and faiss) while timing; give what a "
                             "deployed replica will have, e.g. 1 per worker on a shared "
                             "machine (default: the libraries' own, one per core). The "
                             "latency file records the count used.")(f)


def template_option(f):
    return click.option("--template", default=None, metavar="PATTERN",
                        help="Text each item is embedded with, as a format pattern over item "
                             "fields (default: '{title}\\n{text}').")(f)


def emit_json(obj: Any) -> None:
    click.echo(json.dumps(obj, indent=2, ensure_ascii=False, sort_keys=False))


def table(rows: list[list[Any]], header: list[str], align: str | None = None) -> str:
    """An aligned text table with floats at three decimals (see tables.text_table)."""
    from .tables import text_table

    return text_table(header, [[_fmt(c) for c in r] for r in rows], align)


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
    from .privacy import describe_counts
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
    if not no_scrub:
        click.echo("scrubbed from query text: " + describe_counts(summary.scrubbed))
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
    return "n/a" if low != low else f"[{low:.3f}, {high:.3f}]"


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

# --- synth --------------------------------------------------------------------------------------

@main.command()
@click.argument("catalogue", type=click.Path(dir_okay=False))
@click.option("-o", "--output", "prefix", required=True, metavar="PREFIX",
              help="Write PREFIX.queries.tsv, PREFIX.qrels and PREFIX.jsonl.")
@click.option("-n", "--per-item", type=int, default=1, show_default=True,
              help="Query slots per item (a slot may be dropped by the filters).")
@click.option("--sample", type=int, default=None, metavar="N",
              help="Use N items, stratified by destination type (default: every item).")
@click.option("--styles", default=None, metavar="MIX",
              help="Style mix, e.g. 'keyword,paraphrase:3' (weight 1 when omitted). Styles: "
                   "keyword, question, paraphrase, typo, llm. Default: paraphrase "
                   "(question,keyword when WordNet is missing and no --lexicon is given).")
@seed_option
@click.option("--lexicon", type=click.Path(dir_okay=False), default=None,
              help="Domain lexicon: lines of 'catalogue wording = everyday wording, ...'.")
@click.option("--wordnet", "wordnet_dir", type=click.Path(file_okay=False), default=None,
              help="WordNet 3.0 folder (default: /usr/share/wordnet if present).")
@click.option("--calibrate-with", type=click.Path(dir_okay=False), default=None,
              metavar="QUERIES.tsv",
              help="Real, unjudged queries (e.g. a search-log sample) to match the overlap "
                   "profile to. Default profile: targets spread over 0-0.6, ceiling 0.75.")
@click.option("--max-overlap", type=float, default=None,
              help="Drop queries sharing more than this share of words with their item.")
@click.option("--check-with", multiple=True, metavar="SPEC",
              help="Keep only queries whose source this encoder (fused if repeated) finds "
                   "in its top --check-depth. Off by default: a checker favours its kind.")
@click.option("--check-depth", type=int, default=None, help="Depth of --check-with [20].")
@click.option("--related-grade", type=int, default=1, show_default=True,
              help="Grade of items in the source's 'related' field and of its consensus "
                   "neighbours (0: neither is judged).")
@click.option("--neighbours", "neighbour_specs", multiple=True, metavar="SPEC",
              help="Encoders that must all place an item among the source's nearest for "
                   "it to be judged at --related-grade [minilm and bm25].")
@click.option("--neighbour-depth", type=click.IntRange(1), default=None,
              help="How many nearest items each --neighbours encoder offers [10, fewer in "
                   "catalogues under 380 items].")
@click.option("--no-neighbours", is_flag=True,
              help="Judge only the source and its 'related' items.")
@click.option("--cache", "cache_dir", type=click.Path(file_okay=False), default=None,
              help="Embedding cache for the --neighbours and --check-with encoders "
                   "[~/.cache/trawl].")
@click.option("--typo-rate", type=float, default=0.15, show_default=True,
              help="Chance that a word of 4+ letters gets a typo (typo style).")
@click.option("--llm-url", default=None, help="OpenAI-compatible server for the llm style.")
@click.option("--llm-model", default=None, help="Model name to ask the --llm-url server for.")
@click.option("--llm-examples", type=click.Path(dir_okay=False), default=None,
              metavar="QUERIES.tsv", help="Real queries shown to the model as style examples.")
@click.option("--llm-timeout", type=float, default=30.0, show_default=True,
              help="Seconds to wait for each reply.")
@click.option("--llm-retries", type=click.IntRange(0, 10), default=3, show_default=True,
              help="Retries after a failed call, waiting 1, 2, 4, ... seconds.")
@click.option("--llm-key-env", default="TRAWL_LLM_API_KEY", show_default=True,
              metavar="NAME", help="Environment variable holding the server's API key, if any.")
@click.option("--no-scrub", is_flag=True,
              help="Send item text and --llm-examples to the chat server as they are "
                   "(default: e-mails, phone numbers, long digit runs and postcodes are "
                   "replaced by placeholders, and counted).")
@template_option
@json_option
@quiet_option
def synth(catalogue: str, prefix: str, per_item: int, sample: int | None, styles: str | None,
          seed: int, lexicon: str | None, wordnet_dir: str | None, calibrate_with: str | None,
          max_overlap: float | None, check_with: tuple[str, ...], check_depth: int | None,
          related_grade: int, neighbour_specs: tuple[str, ...], neighbour_depth: int | None,
          no_neighbours: bool, cache_dir: str | None, typo_rate: float,
          llm_url: str | None, llm_model: str | None,
          llm_examples: str | None, llm_timeout: float, llm_retries: int, llm_key_env: str,
          no_scrub: bool, template: str | None, as_json: bool, quiet: bool) -> None:
    """Synthesise pseudo-queries with graded silver judgments: the source item is grade 2,
    its related items and the items both a dense and a lexical encoder place among its
    ten nearest grade 1. Prints queries per style and destination type, their
    length and their word overlap with the source item.

    Silver judgments are estimates made by a program, not by people.

    \b
    Example:
      trawl synth corpora/quillfern.jsonl -o silver/quillfern --per-item 2 --seed 7
      trawl synth items.jsonl -o out/s --styles keyword,paraphrase:3 --lexicon words.txt
      trawl synth items.jsonl -o out/s --calibrate-with log-sample.tsv --sample 200
    """
    import os

    from .catalogue import load_catalogue
    from .errors import UsageError
    from .privacy import describe_counts
    from .queries import read_queries
    from .synth import LlmClient, load_wordnet, read_lexicon, synthesise, write_silver
    from .synth.llm import PromptScrubber, keep_text
    from .synth.compose import parse_mix
    from .synth.neighbours import NEIGHBOUR_SPECS

    mix = parse_mix(styles)
    if (llm_url is None) != (llm_model is None):
        raise UsageError("--llm-url and --llm-model go together; give both or neither")
    if llm_url is None and (llm_examples is not None or "llm" in mix):
        raise UsageError("--llm-examples and the 'llm' style need --llm-url and --llm-model")
    if llm_url is not None and "llm" not in mix:
        raise UsageError("--llm-url given but 'llm' is not in --styles; add e.g. "
                         "--styles keyword,paraphrase,llm:2")
    if no_scrub and llm_url is None:
        raise UsageError("--no-scrub applies to LLM prompts; it needs --llm-url")
    if no_neighbours and (neighbour_specs or neighbour_depth is not None):
        raise UsageError("--no-neighbours contradicts --neighbours/--neighbour-depth")
    if check_depth is not None and not check_with:
        raise UsageError("--check-depth needs --check-with")
    wordnet = "auto"
    if wordnet_dir is not None:
        wordnet = load_wordnet(wordnet_dir)
        if wordnet is None:
            raise UsageError(f"--wordnet {wordnet_dir}: no WordNet index.noun/data.noun there")
    cat = load_catalogue(catalogue, template)
    llm = None
    if llm_url is not None:
        llm = LlmClient(llm_url, llm_model, api_key=os.environ.get(llm_key_env) or None,
                        timeout=llm_timeout, retries=llm_retries,
                        examples=tuple(read_queries(llm_examples).values()) if llm_examples
                        else (), redact=keep_text if no_scrub else PromptScrubber())
    silver = synthesise(
        cat, per_item=per_item, sample=sample, styles=mix, seed=seed,
        calibrate_with=read_queries(calibrate_with) if calibrate_with else None,
        calibration_source=calibrate_with or "", max_overlap=max_overlap,
        check_with=check_with, check_depth=check_depth or 20,
        lexicon=read_lexicon(lexicon) if lexicon else None, wordnet=wordnet, llm=llm,
        typo_rate=typo_rate, related_grade=related_grade,
        neighbours=() if no_neighbours else neighbour_specs or NEIGHBOUR_SPECS,
        neighbour_depth=neighbour_depth, cache_dir=cache_dir, quiet=quiet)
    paths = write_silver(prefix, silver)
    scrubbed = llm.scrubbed if llm is not None else None
    if as_json:
        emit_json({**silver.summary, "skipped_styles": dict(silver.skipped_styles),
                   "scrubbed_from_prompts": scrubbed, "files": [str(p) for p in paths]})
        return
    for style, why in silver.skipped_styles.items():
        click.echo(f"skipped style {style}: {why}", err=True)
    s = silver.summary
    click.echo(f"{s['queries']} queries from {s['items']} items ({s['dropped']} slots dropped, "
               f"{s['merged_drafts']} near-duplicates merged)")
    click.echo()
    rows = [[r["style"], r["type"], r["queries"],
             "-" if r["mean_words"] is None else f"{r['mean_words']:.1f}",
             "-" if r["mean_overlap"] is None else f"{r['mean_overlap']:.2f}",
             ", ".join(f"{n} {why}" for why, n in r["dropped"].items()) or "-"]
            for r in s["rows"]]
    click.echo(table(rows, ["style", "type", "queries", "words", "overlap", "dropped"],
                     "llrrrl"))
    click.echo()
    click.echo(f"overlap = share of query words found in the source item (mean "
               f"{s['mean_overlap']}); profile: {s['profile']['source']}, ceiling "
               f"{s['profile']['ceiling']}")
    nb = s["neighbours"]
    if nb["encoders"]:
        click.echo(f"{nb['judgments_added']} neighbour judgments at grade {related_grade} "
                   f"(items {' and '.join(nb['encoders'])} all place among a source's "
                   f"{nb['depth']} nearest)")
    click.echo("Silver judgments are estimates, not human labels; see DEVELOPERS.md "
               "'How good is silver?' for their measured agreement with people.")
    if scrubbed is not None:
        click.echo("scrubbed from LLM prompts: " + describe_counts(scrubbed))
    for p in paths:
        click.echo(f"wrote {p}")


# --- index, search, fuse, distill --------------------------------------------------------------

ENCODER_HELP = ("Encoder: minilm, minilm-int8, static:DIR, st:DIR[;query=PREFIX][;document=PREFIX] "
                "or bm25[;k1=X][;b=Y].")


@main.command("index")
@click.argument("catalogue", type=click.Path(dir_okay=False))
@click.option("-e", "--encoder", "spec", required=True, metavar="SPEC", help=ENCODER_HELP)
@click.option("-o", "--output", "output", required=True, type=click.Path(file_okay=False),
              help="Index folder to create or update (replaced atomically).")
@click.option("--ann", type=click.Choice(["exact", "hnsw"]), default="exact", show_default=True,
              help="exact inner-product search, or an approximate HNSW graph (faiss).")
@click.option("--hnsw-m", type=int, default=None, help="HNSW links per node [32].")
@click.option("--hnsw-ef-construction", type=int, default=None,
              help="HNSW candidate list while building [200].")
@click.option("--hnsw-ef-search", type=int, default=None,
              help="HNSW candidate list while searching [128].")
@click.option("--batch-size", type=int, default=32, show_default=True,
              help="Texts per encoder batch.")
@click.option("--cache-dir", type=click.Path(file_okay=False), default=None,
              help="Embedding cache folder (default: $TRAWL_CACHE_DIR or ~/.cache/trawl).")
@template_option
@quiet_option
@json_option
def index_command(catalogue: str, spec: str, output: str, ann: str, hnsw_m: int | None,
                  hnsw_ef_construction: int | None, hnsw_ef_search: int | None, batch_size: int,
                  cache_dir: str | None, template: str | None, quiet: bool,
                  as_json: bool) -> None:
    """Build or incrementally update the search index of a catalogue with one encoder.

    Vectors are cached by encoder and text, so re-indexing embeds only new or edited
    items and an interrupted build resumes where it stopped.

    \b
    Example:
      trawl index corpora/quillfern.jsonl -e minilm -o idx/minilm
      trawl index corpora/quillfern.jsonl -e bm25 -o idx/bm25
      trawl index items.jsonl -e minilm-int8 -o idx/int8 --ann hnsw
    """
    from .catalogue import load_catalogue
    from .index import HnswParams, build_index
    from .retrievers.spec import parse_spec

    given = {"--hnsw-m": hnsw_m, "--hnsw-ef-construction": hnsw_ef_construction,
             "--hnsw-ef-search": hnsw_ef_search}
    named = [flag for flag, v in given.items() if v is not None]
    if named and ann != "hnsw":
        raise UsageError(f"{named[0]} needs --ann hnsw (got --ann {ann})")
    hnsw = None
    if ann == "hnsw":
        d = HnswParams()
        hnsw = HnswParams(d.m if hnsw_m is None else hnsw_m,
                          d.ef_construction if hnsw_ef_construction is None
                          else hnsw_ef_construction,
                          d.ef_search if hnsw_ef_search is None else hnsw_ef_search)
    parse_spec(spec)
    info = build_index(load_catalogue(catalogue, template), spec, output, ann=ann,
                       cache_dir=cache_dir, batch_size=batch_size, quiet=quiet, hnsw=hnsw)
    if as_json:
        emit_json(info.as_dict())
        return
    if info.dim:
        done = (f"{info.dim} dims, {info.ann}): {info.embedded} embedded, {info.reused} from "
                "cache")
    else:
        done = "inverted index)"
    click.echo(f"indexed {info.items} items with {info.spec} ({done}, {info.items_per_s:.1f} "
               f"items/s; {info.bytes:,} bytes -> {info.path}")


@main.command()
@click.argument("index", type=click.Path(file_okay=False))
@click.argument("queries", type=click.Path(dir_okay=False))
@click.option("-o", "--output", required=True, type=click.Path(dir_okay=False),
              help="TREC run to write; latency figures go to OUTPUT.latency.json.")
@click.option("-k", "k", type=int, default=100, show_default=True, help="Results per query.")
@click.option("--catalogue", type=click.Path(dir_okay=False), default=None,
              help="Catalogue to check the index against (default: the file it was built "
                   "from, if it is still there).")
@click.option("--name", default=None,
              help="Run name for the tag column (default: output file name without extension).")
@click.option("--warmup", type=int, default=5, show_default=True,
              help="Queries run before timing starts (not counted).")
@threads_option
@quiet_option
@json_option
def search(index: str, queries: str, output: str, k: int, catalogue: str | None,
           name: str | None, warmup: int, threads: int | None, quiet: bool,
           as_json: bool) -> None:
    """Search an index with every query; write a TREC run and its latency figures.

    Latency is encode + search of one query at a time, as a search box sends them
    (p50/p95/p99 after warm-up); throughput is the whole set in one batch. Latency
    depends on the compute threads: time with the count you will deploy (--threads).

    \b
    Example:
      trawl search idx/minilm qrels/quillfern-gold.queries.tsv -o runs/minilm.run
      trawl search idx/minilm queries.tsv -o runs/minilm-1t.run --threads 1
      trawl search idx/bm25 queries.tsv -o runs/bm25.run -k 20 --json
    """
    from pathlib import Path

    from .latency import check_threads, measure_search
    from .catalogue import load_catalogue
    from .files import write_text_atomic
    from .index import open_index, read_manifest
    from .queries import read_queries
    from .runs import write_run

    check_threads(threads)
    manifest = read_manifest(index)
    recorded = manifest["catalogue"]["path"]
    cat_path = catalogue or (recorded if Path(recorded).is_file() else None)
    if cat_path is None:
        click.echo(f"warning: {recorded} (the catalogue this index was built from) is gone; "
                   "cannot check the index is current (give --catalogue)", err=True)
    cat = load_catalogue(cat_path, manifest["catalogue"]["template"]) if cat_path else None
    idx = open_index(index, cat)
    run_name = name or "_".join(Path(output).name.split(".")[0].split()) or "run"
    run, report = measure_search(idx, read_queries(queries), k, warmup=warmup, quiet=quiet,
                                 name=run_name, threads=threads)
    write_run(output, run)
    sidecar = f"{output}.latency.json"
    write_text_atomic(sidecar, json.dumps(report.as_dict(), indent=2) + "\n")
    if as_json:
        emit_json({"run": output, "latency_file": sidecar, **report.as_dict()})
        return
    click.echo(table([[report.encoder, report.p50_ms, report.p95_ms, report.p99_ms,
                       report.batch_queries_per_s, report.index_bytes, report.bytes_per_item]],
                     ["encoder", "p50 ms", "p95 ms", "p99 ms", "batch q/s", "index bytes",
                      "bytes/item"]))
    click.echo(f"wrote {output} ({len(run)} queries, top {k}) and {sidecar} "
               f"({report.queries_timed} queries timed one at a time, {report.warmup} warm-up "
               f"excluded; {report.threads} thread(s) on {report.cpu})")


@main.command()
@click.argument("runs", nargs=-1, required=True, type=click.Path(dir_okay=False))
@click.option("-o", "--output", required=True, type=click.Path(dir_okay=False),
              help="Fused TREC run to write.")
@click.option("--rrf-k", type=int, default=60, show_default=True,
              help="RRF constant k in 1 / (k + rank).")
@click.option("--depth", type=int, default=None,
              help="Ranks read from each run and kept in the fused run (default: all).")
@click.option("--name", default=None, help="Run name for the tag column (default: rrf-A+B).")
def fuse(runs: tuple[str, ...], output: str, rrf_k: int, depth: int | None,
         name: str | None) -> None:
    """Fuse runs with Reciprocal Rank Fusion, e.g. a dense and a BM25 run into a hybrid.

    \b
    Example:
      trawl fuse runs/minilm.run runs/bm25.run -o runs/hybrid.run
    """
    from .fusion import reciprocal_rank_fusion
    from .runs import read_run, write_run

    if len(runs) < 2:
        raise UsageError(f"fuse needs at least 2 runs, got {len(runs)}")
    fused = reciprocal_rank_fusion([read_run(r) for r in runs], k=rrf_k, depth=depth, name=name)
    write_run(output, fused)
    click.echo(f"wrote {output}: {fused.name}, {len(fused)} queries")


@main.command()
@click.option("-o", "--output", required=True, type=click.Path(file_okay=False),
              help="Folder for the static model (replaced atomically).")
@click.option("--pca-dims", type=int, default=256, show_default=True,
              help="Vector size after PCA (at most 384).")
@quiet_option
def distill(output: str, pca_dims: int, quiet: bool) -> None:
    """Distil a static encoder from the bundled model (model2vec), offline.

    Use the result as -e static:DIR: much faster to index and query, usually less
    accurate; `trawl eval` measures by how much.

    \b
    Example:
      trawl distill -o models/static-256
      trawl index items.jsonl -e static:models/static-256 -o idx/static
    """
    import time

    from .distill import distill_static

    start = time.perf_counter()
    path = distill_static(output, pca_dims=pca_dims, quiet=quiet)
    click.echo(f"wrote static encoder ({pca_dims} dims) to {path} in "
               f"{time.perf_counter() - start:.1f} s; use it as -e static:{path}")


# --- scoring, comparison, misses ----------------------------------------------------------------

def catalogue_option(required: bool, help: str):
    return click.option("-c", "--catalogue", required=required,
                        type=click.Path(dir_okay=False), help=help)


def metrics_option(f):
    return click.option("-m", "--metric", "metrics", multiple=True, metavar="METRIC",
                        help="Metric to compute; repeat for several. Forms: ndcg@K, mrr@K, "
                             "recall@K, precision@K, hit@K, map, map@K. Default: ndcg@10, "
                             "mrr@10, recall@10, recall@100.")(f)


def _metrics(names: tuple[str, ...]):
    from .metrics import DEFAULT_METRICS, parse_metrics

    return parse_metrics(names or DEFAULT_METRICS)


def silver_option(f):
    return click.option("--silver", is_flag=True,
                        help="Mark the figures as estimates from silver (machine-made) "
                             "judgments; automatic when a `trawl synth` provenance file "
                             "PREFIX.jsonl sits beside PREFIX.qrels.")(f)


def _is_silver(qrels: str, flag: bool) -> bool:
    from .scores import silver_provenance

    return flag or silver_provenance(qrels) is not None


def _emit_report(qrels: str, silver: bool, report: Any, as_json: bool, render) -> None:
    """The report as JSON (with the judgments' path and kind) or as ``render()`` text."""
    if as_json:
        emit_json({"qrels": qrels, "silver": silver, **report.as_dict()})
        return
    click.echo(render())
    if silver:
        from .scores import silver_note

        click.echo()
        click.echo(silver_note(qrels))


@main.command()
@click.argument("qrels", type=click.Path(dir_okay=False))
@click.argument("runs", nargs=-1, required=True, type=click.Path(dir_okay=False))
@catalogue_option(False, "Catalogue of the judged items: adds means per destination type.")
@metrics_option
@click.option("--resamples", type=click.IntRange(min=0), default=0, show_default=True,
              help="Bootstrap resamples for a 95% interval around each mean (0: none).")
@seed_option
@click.option("--per-query", "per_query_path", type=click.Path(dir_okay=False), default=None,
              metavar="PATH", help="Write the per-query scores to PATH (.csv or .json).")
@click.option("--csv", "csv_path", type=click.Path(dir_okay=False), default=None,
              metavar="PATH", help="Write the table of means (one row per run, metric and "
                                   "type) to PATH as CSV.")
@silver_option
@json_option
def score(qrels: str, runs: tuple[str, ...], catalogue: str | None, metrics: tuple[str, ...],
          resamples: int, seed: int, per_query_path: str | None, csv_path: str | None,
          silver: bool, as_json: bool) -> None:
    """Score TREC runs against qrels: means over all queries and, with --catalogue, per
    destination type.

    Queries in the qrels that a run lacks score 0 and are warned about, as are run
    results naming items missing from the catalogue; duplicate run lines are errors.
    Scores under silver (machine-made) judgments are estimates.

    \b
    Example:
      trawl score qrels/quillfern-gold.qrels minilm.run bm25.run -c corpora/quillfern.jsonl
      trawl score silver.qrels minilm.run -m ndcg@10 -m hit@1 --per-query scores.csv
    """
    from .errors import UsageError
    from .scores import read_runs, render_scores, score_runs

    ms = _metrics(metrics)
    if per_query_path is not None and not per_query_path.endswith((".csv", ".json")):
        raise UsageError(f"--per-query {per_query_path}: name a .csv or .json file")
    from .judgments import read_qrels

    cat = None
    if catalogue is not None:
        from .catalogue import load_catalogue

        cat = load_catalogue(catalogue)
    report = score_runs(read_qrels(qrels), read_runs(runs), ms, cat, resamples=resamples,
                        seed=seed)
    if per_query_path is not None:
        _write_rows(per_query_path, report.per_query_rows(),
                    ["run", "qid", "types", *report.metrics])
    if csv_path is not None:
        from .tables import write_csv

        write_csv(csv_path, report.score_rows(), ["run", "metric", "type", "n", "mean",
                                                  "low", "high"])
    _emit_report(qrels, _is_silver(qrels, silver), report, as_json,
                 lambda: render_scores(report, MAX_WARNINGS_SHOWN))


def _write_rows(path: str, rows: list[dict[str, Any]], columns: list[str]) -> None:
    if path.endswith(".json"):
        from .files import write_text_atomic

        write_text_atomic(path, json.dumps(rows, indent=1, ensure_ascii=False) + "\n")
    else:
        from .tables import write_csv

        write_csv(path, rows, columns)


@main.command()
@click.argument("qrels", type=click.Path(dir_okay=False))
@click.argument("runs", nargs=-1, required=True, type=click.Path(dir_okay=False))
@click.option("--baseline", default=None, metavar="RUN",
              help="Run every other run is compared with: a run's name or one of the RUN "
                   "files (default: the first RUN).")
@catalogue_option(False, "Catalogue of the judged items: adds comparisons per destination "
                         "type.")
@metrics_option
@click.option("--resamples", type=click.IntRange(min=1), default=10000, show_default=True,
              help="Bootstrap resamples and random sign flips.")
@seed_option
@click.option("--interval", "method", type=click.Choice(["percentile", "bca"]),
              default="percentile", show_default=True,
              help="Bootstrap interval: percentile, or bias-corrected and accelerated.")
@click.option("--alpha", type=click.FloatRange(0, 1, min_open=True, max_open=True),
              default=0.05, show_default=True,
              help="Significance level; the intervals are at 1 - alpha.")
@click.option("--long", "long_table", is_flag=True,
              help="One line per comparison with interval, p-values and effect size.")
@click.option("--csv", "csv_path", type=click.Path(dir_okay=False), default=None,
              metavar="PATH", help="Write every comparison row to PATH as CSV.")
@silver_option
@json_option
@quiet_option
def compare(qrels: str, runs: tuple[str, ...], baseline: str | None, catalogue: str | None,
            metrics: tuple[str, ...], resamples: int, seed: int, method: str, alpha: float,
            long_table: bool, csv_path: str | None, silver: bool, as_json: bool,
            quiet: bool) -> None:
    """Compare runs with a baseline on the same queries: mean difference per metric,
    paired bootstrap interval, p-values from the paired bootstrap and a sign-flip
    randomisation test, Holm's correction over every comparison shown, and an effect
    size (mean difference over the spread of per-query differences).

    \b
    Example:
      trawl compare qrels/quillfern-gold.qrels bm25.run minilm.run fused.run
      trawl compare silver.qrels a.run b.run --baseline b.run -c items.jsonl --long
    """
    from .compare import CSV_COLUMNS, compare_runs, render_comparison
    from .errors import UsageError
    from .judgments import read_qrels
    from .scores import read_runs

    if long_table and as_json:
        raise UsageError("--long and --json conflict: --long shapes the table, --json "
                         "replaces it; drop one")
    if len(runs) < 2:
        raise UsageError("compare needs at least two RUN files (a baseline and one more)")
    ms = _metrics(metrics)
    cat = None
    if catalogue is not None:
        from .catalogue import load_catalogue

        cat = load_catalogue(catalogue)
    loaded = read_runs(runs)
    if baseline is not None and baseline in runs:
        baseline = loaded[runs.index(baseline)].name
    comp = compare_runs(read_qrels(qrels), loaded, ms, baseline, resamples, seed, method,
                        cat, alpha, quiet)
    if csv_path is not None:
        from .tables import write_csv

        write_csv(csv_path, [r.as_dict() for r in comp.rows], CSV_COLUMNS)
    _emit_report(qrels, _is_silver(qrels, silver), comp, as_json,
                 lambda: render_comparison(comp, long_table, MAX_WARNINGS_SHOWN))


@main.command()
@click.argument("qrels", type=click.Path(dir_okay=False))
@click.argument("run", type=click.Path(dir_okay=False))
@catalogue_option(True, "Catalogue of the judged and retrieved items (their types).")
@click.option("-k", "k", type=click.IntRange(min=1), default=10, show_default=True,
              help="Cutoff for hit@k and for counting a miss.")
@click.option("--worst", type=click.IntRange(min=0), default=5, show_default=True,
              help="Worst queries listed per destination type.")
@click.option("--queries", "queries_path", type=click.Path(dir_okay=False), default=None,
              help="Queries TSV, to show the text of the worst queries.")
@click.option("--scrub", is_flag=True,
              help="Replace e-mails, phone numbers, long digit runs and postcodes in the "
                   "query text shown (needs --queries); prints how many were replaced.")
@click.option("--csv", "csv_path", type=click.Path(dir_okay=False), default=None,
              metavar="PATH", help="Write the per-type table to PATH as CSV.")
@silver_option
@json_option
def misses(qrels: str, run: str, catalogue: str, k: int, worst: int, queries_path: str | None,
           scrub: bool, csv_path: str | None, silver: bool, as_json: bool) -> None:
    """Where a run fails, by destination type of the wanted item: hit@1, hit@k, misses,
    median rank of the first relevant item, the types of what came first instead, and
    the worst queries with the item that won.

    \b
    Example:
      trawl misses qrels/quillfern-gold.qrels minilm.run -c corpora/quillfern.jsonl
      trawl misses silver.qrels bm25.run -c items.jsonl -k 5 --queries silver.queries.tsv
      trawl misses logs.qrels bm25.run -c items.jsonl --queries logs.queries.tsv --scrub
    """
    if scrub and queries_path is None:
        raise UsageError("--scrub applies to query text; it needs --queries")
    from .catalogue import load_catalogue
    from .judgments import read_qrels
    from .misses import CSV_COLUMNS, miss_table, render_misses
    from .runs import read_run

    texts = None
    if queries_path is not None:
        from .queries import read_queries

        texts = read_queries(queries_path)
    rep = miss_table(read_qrels(qrels), read_run(run), load_catalogue(catalogue), k, worst,
                     texts, scrub_queries=scrub)
    if csv_path is not None:
        from .tables import write_csv

        write_csv(csv_path, [r.as_dict() for r in rep.rows], CSV_COLUMNS)
    _emit_report(qrels, _is_silver(qrels, silver), rep, as_json,
                 lambda: render_misses(rep, MAX_WARNINGS_SHOWN))


# --- the whole evaluation -------------------------------------------------------------------------

def _step(quiet: bool):
    """Step lines on stderr (so --json output stays clean), silenced by --quiet."""
    return None if quiet else (lambda msg: click.echo(msg, err=True))


def _finish(result, as_json: bool) -> None:
    from .report.terminal import summary

    if as_json:
        emit_json(result.bundle)
        return
    click.echo(summary(result.bundle))
    click.echo(f"\nwrote {result.out_dir}/ (runs, scores, comparisons, misses as CSV and "
               f"JSON) and {result.report} in {result.seconds:.1f} s")


@main.command("eval")
@click.argument("catalogue", type=click.Path(dir_okay=False))
@click.argument("queries", type=click.Path(dir_okay=False))
@click.argument("qrels", type=click.Path(dir_okay=False))
@click.option("-e", "--encoder", "encoders", multiple=True, required=True, metavar="SPEC",
              help="Encoder to evaluate; repeat for several. NAME=SPEC names it in the "
                   "report. Specs: minilm, minilm-int8, static:DIR, st:DIR, bm25.")
@click.option("-o", "--output", required=True, type=click.Path(file_okay=False),
              help="Folder for indexes, runs, tables and report.html.")
@click.option("--fuse", multiple=True, metavar="A+B",
              help="Add a Reciprocal Rank Fusion of these systems; repeat for several.")
@click.option("--baseline", default=None, metavar="NAME",
              help="System every other is compared with (default: the first -e).")
@click.option("-k", "k", type=click.IntRange(min=1), default=100, show_default=True,
              help="Results kept per query (capped at the catalogue size).")
@metrics_option
@click.option("--resamples", type=click.IntRange(min=1), default=10000, show_default=True,
              help="Bootstrap and randomisation resamples.")
@seed_option
@click.option("--judgments", "judged_by", type=click.Choice(["auto", "silver", "human"]),
              default="auto", show_default=True,
              help="Who made the judgments; auto: silver when a trawl synth provenance "
                   "file (PREFIX.jsonl) sits beside PREFIX.qrels.")
@click.option("--ann", type=click.Choice(["exact", "hnsw"]), default="exact",
              show_default=True, help="Dense search: exact, or an HNSW graph.")
@click.option("--cache", "cache_dir", type=click.Path(file_okay=False), default=None,
              help="Embedding cache folder (default: $TRAWL_CACHE_DIR or ~/.cache/trawl).")
@template_option
@click.option("--title", default=None, help="Title of the report.")
@click.option("--scrub", is_flag=True,
              help="Replace e-mails, phone numbers, long digit runs and postcodes in the "
                   "query text the report and tables show (searches use the original).")
@click.option("--retime", is_flag=True,
              help="Search and time every system again, even those whose index, queries, "
                   "depth and threads are unchanged since the last run into OUTPUT.")
@threads_option
@quiet_option
@json_option
def eval_command(catalogue: str, queries: str, qrels: str, encoders: tuple[str, ...],
                 output: str, fuse: tuple[str, ...], baseline: str | None, k: int,
                 metrics: tuple[str, ...], resamples: int, seed: int, judged_by: str,
                 ann: str, cache_dir: str | None, template: str | None, title: str | None,
                 scrub: bool, retime: bool, threads: int | None, quiet: bool,
                 as_json: bool) -> None:
    """Index, search, score, compare and analyse misses for every encoder in one go,
    and write report.html.

    Indexes are kept in OUTPUT/indexes and reused while the catalogue and encoder are
    unchanged; vectors come from the embedding cache; a system whose index, queries,
    depth and threads are unchanged keeps its run and latency figures; so reruns finish
    fast. Prints quality against latency with significance marks and the headline of the
    miss table. Under silver judgments every figure is an estimate, and the output says
    so. Latency is timed with --threads compute threads when given (the report shows the
    count); time with what a deployed replica will have.

    \b
    Example:
      trawl synth corpora/quillfern.jsonl -o silver/qf
      trawl eval corpora/quillfern.jsonl silver/qf.queries.tsv silver/qf.qrels \\
        -e minilm -e bm25 --fuse minilm+bm25 -o eval-out --threads 1
    """
    from pathlib import Path

    from .metrics import DEFAULT_METRICS
    from .pipeline import JudgmentSet, evaluate

    silver = {"auto": None, "silver": True, "human": False}[judged_by]
    js = JudgmentSet("judgments", Path(queries), Path(qrels), Path(qrels).name, silver=silver)
    result = evaluate(catalogue, [js], encoders, output, fuse=fuse, baseline=baseline, k=k,
                      metrics=metrics or DEFAULT_METRICS, resamples=resamples, seed=seed,
                      ann=ann, cache_dir=cache_dir, template=template, title=title,
                      scrub_queries=scrub, retime=retime, threads=threads, quiet=quiet,
                      notify=_step(quiet or as_json))
    _finish(result, as_json)
    if scrub and not as_json:
        click.echo(result.bundle["setup"]["notes"]["privacy"])


@main.command()
@click.option("-o", "--output", default="demo-out", show_default=True,
              type=click.Path(file_okay=False), help="Folder for everything the demo makes.")
@click.option("-e", "--encoder", "encoders", multiple=True, metavar="SPEC",
              help="Evaluate only these encoders (default: minilm, minilm-int8, static, "
                   "bm25; 'static' is the model the demo distils).")
@click.option("--fuse", multiple=True, metavar="A+B",
              help="Fused systems (default: minilm+bm25 when both are evaluated).")
@click.option("--sample", type=click.IntRange(min=1), default=None,
              help="Synthesise queries from this many items only (stratified by type).")
@click.option("--resamples", type=click.IntRange(min=1), default=10000, show_default=True,
              help="Bootstrap and randomisation resamples.")
@seed_option
@click.option("--retime", is_flag=True,
              help="Search and time every system again, even those whose index, queries, "
                   "depth and threads are unchanged since the last run into OUTPUT.")
@threads_option
@quiet_option
@json_option
def demo(output: str, encoders: tuple[str, ...], fuse: tuple[str, ...], sample: int | None,
         resamples: int, seed: int, retime: bool, threads: int | None, quiet: bool,
         as_json: bool) -> None:
    """The whole job on the bundled transit catalogue: check it, distil the static
    encoder, synthesise silver queries, evaluate every encoder and the hybrid against the
    silver set and the hand-judged gold set, measure how alike the two sets rank the
    systems, and write OUTPUT/report.html.

    Reruns reuse the distilled model, the embedding cache, the indexes and (for unchanged
    inputs) the runs and latency figures in OUTPUT.

    \b
    Example:
      trawl demo -o demo-out
      trawl demo -o quick -e bm25 -e minilm --sample 100 --resamples 1000
    """
    from .pipeline import DEMO_ENCODERS, demo as run_demo

    result = run_demo(output, encoders=encoders or DEMO_ENCODERS, fuse=fuse or None,
                      sample=sample, resamples=resamples, seed=seed, retime=retime,
                      threads=threads, quiet=quiet, notify=_step(quiet or as_json))
    _finish(result, as_json)

if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
