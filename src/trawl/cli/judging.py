"""`trawl synth`, `review export|import` and `agree`: make judgments, check them by hand,
and measure whether two judgment sets rank systems alike."""

from __future__ import annotations

import click

from ..report import text
from . import (cache_dir_option, catalogue_option, echo_err, emit_json, flag, in_file,
               json_option, main, names_option, no_scrub_option, out_option, partial_option,
               quiet_option, reject, seed_option, show, template_option)


@main.command()
@in_file("catalogue")
@out_option("-o", "--output", "prefix", required=True, metavar="PREFIX",
            help="Write PREFIX.queries.tsv, PREFIX.qrels and PREFIX.jsonl.")
@click.option("-n", "--per-item", type=int, default=1, show_default=True,
              help="Query slots per item (a slot may be dropped by the filters).")
@click.option("--sample", type=int, default=None, metavar="N",
              help="Use N items, stratified by destination type (default: every item; "
                   "5,000 in a larger catalogue).")
@click.option("--styles", default=None, metavar="MIX",
              help="Style mix, e.g. 'keyword,paraphrase:3' (weight 1 when omitted). Styles: "
                   "keyword, question, paraphrase, typo, llm. Default: paraphrase "
                   "(question,keyword when WordNet is missing and no --lexicon is given).")
@seed_option
@click.option("--lexicon", type=click.Path(dir_okay=False), default=None,
              help="Domain lexicon: lines of 'catalogue wording = everyday wording, ...'.")
@out_option("--wordnet", "wordnet_dir", folder=True, default=None,
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
@flag("--no-neighbours", help="Judge only the source and its 'related' items.")
@cache_dir_option
@click.option("--typo-rate", type=float, default=0.15, show_default=True,
              help="Chance that a word of 4+ letters gets a typo (typo style).")
@click.option("--llm-url", default=None,
              help="Chat-completions-compatible server for the llm style (item text is sent "
                   "to it; see --no-scrub).")
@click.option("--llm-model", default=None, help="Model name to ask the --llm-url server for.")
@click.option("--llm-examples", type=click.Path(dir_okay=False), default=None,
              metavar="QUERIES.tsv", help="Real queries shown to the model as style examples.")
@click.option("--llm-timeout", type=float, default=30.0, show_default=True,
              help="Seconds to wait for each reply.")
@click.option("--llm-retries", type=click.IntRange(0, 10), default=3, show_default=True,
              help="Retries after a failed call, waiting 1, 2, 4, ... seconds.")
@click.option("--llm-key-env", default="TRAWL_LLM_API_KEY", show_default=True,
              metavar="NAME", help="Environment variable holding the server's API key, if any.")
@flag("--no-scrub", help="Send item text and --llm-examples to the chat server as they are "
                         "(default: e-mails, phone numbers, long digit runs and postcodes in "
                         "them are replaced by placeholders, and counted; the rest of the "
                         "text is sent as written).")
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
    from ..catalogue import load_catalogue
    from ..queries import read_queries
    from ..silver import write_silver
    from ..synth import SynthSettings, read_lexicon, synthesise
    from ..synth.settings import parse_mix
    from ..synth.neighbours import NEIGHBOUR_SPECS
    from ..synth.options import llm_client, wordnet_from

    mix = parse_mix(styles)
    reject([((llm_url is None) != (llm_model is None),
             "--llm-url and --llm-model go together; give both or neither"),
            (llm_url is None and (llm_examples is not None or "llm" in mix),
             "--llm-examples and the 'llm' style need --llm-url and --llm-model"),
            (llm_url is not None and "llm" not in mix,
             "--llm-url given but 'llm' is not in --styles; add e.g. "
             "--styles keyword,paraphrase,llm:2"),
            (no_scrub and llm_url is None,
             "--no-scrub applies to LLM prompts; it needs --llm-url"),
            (no_neighbours and (neighbour_specs or neighbour_depth is not None),
             "--no-neighbours contradicts --neighbours/--neighbour-depth"),
            (check_depth is not None and not check_with, "--check-depth needs --check-with")])
    wordnet = wordnet_from(wordnet_dir)
    cat = load_catalogue(catalogue, template)
    llm = llm_client(llm_url, llm_model, key_env=llm_key_env, timeout=llm_timeout,
                     retries=llm_retries, scrub=not no_scrub,
                     examples=tuple(read_queries(llm_examples).values()) if llm_examples
                     else ())
    settings = SynthSettings(
        per_item=per_item, sample=sample, styles=mix, seed=seed, max_overlap=max_overlap,
        check_with=tuple(check_with), check_depth=check_depth or 20, typo_rate=typo_rate,
        related_grade=related_grade,
        neighbours=() if no_neighbours else tuple(neighbour_specs) or NEIGHBOUR_SPECS,
        neighbour_depth=neighbour_depth)
    silver = synthesise(
        cat, settings, calibrate_with=read_queries(calibrate_with) if calibrate_with else None,
        calibration_source=calibrate_with or "",
        lexicon=read_lexicon(lexicon) if lexicon else None, wordnet=wordnet, llm=llm,
        cache_dir=cache_dir, quiet=quiet)
    paths = write_silver(prefix, silver)
    data = {**silver.summary, "skipped_styles": dict(silver.skipped_styles),
            "scrubbed_from_prompts": llm.scrubbed if llm is not None else None,
            "files": [str(p) for p in paths]}
    if as_json:
        emit_json(data)
        return
    summary, skipped = text.synth(data, related_grade)
    echo_err(skipped)
    click.echo(summary)


@main.group()
def review() -> None:
    """Review judgments in a spreadsheet and bring the verdicts back as qrels.

    \b
    Example:
      trawl review export silver/qf.qrels silver/qf.queries.tsv -c corpora/quillfern.jsonl \\
          -o review.csv
      trawl review import review.csv -c corpora/quillfern.jsonl -o reviewed.qrels
    """


@review.command("export")
@in_file("qrels")
@in_file("queries")
@catalogue_option(True, "Catalogue the judged items come from (titles, snippets, links).")
@out_option(required=True,
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
@no_scrub_option
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
      trawl review export silver/qf.qrels silver/qf.queries.tsv -c corpora/quillfern.jsonl \\
          -o review.csv --runs runs/silver-minilm.run --runs runs/silver-bm25.run --sample 40
      trawl review export silver.qrels silver.queries.tsv -c items.jsonl -o sheet.xlsx \\
          --sample 60 --reviewers 2
    """
    from ..catalogue import load_catalogue
    from ..judgments import read_qrels
    from ..queries import read_queries
    from ..review import export_sheet
    from ..runs import read_run
    from ..silver import query_styles

    reject([(pairs == "silver" and bool(run_paths),
             "--runs has no effect with --pairs silver; drop one of them")])
    styles, found = query_styles(qrels, provenance)
    provenance = provenance or (str(found) if found is not None else None)
    summary = export_sheet(
        read_qrels(qrels), read_queries(queries), load_catalogue(catalogue), output,
        runs=[read_run(r) for r in run_paths], pairs=pairs, depth=depth, sample=sample,
        reviewers=reviewers, overlap=overlap, max_grade=max_grade,
        styles=styles, scrub_queries=not no_scrub,
        seed=seed)
    data = {**summary.as_dict(), "provenance": provenance}
    if as_json:
        emit_json(data)
        return
    lines, warnings = text.review_export(data, scrubbed=not no_scrub)
    click.echo(lines)
    echo_err(warnings)


@review.command("import")
@in_file("sheets", nargs=-1, required=True)
@catalogue_option(True, "Catalogue the sheets were made from (item ids are checked against it).")
@out_option(required=True, help="Reviewed qrels to write.")
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
      trawl review import review.csv -c corpora/quillfern.jsonl --base silver/qf.qrels \\
          -o reviewed.qrels
      trawl review import sheet-1.xlsx sheet-2.xlsx -c items.jsonl -o reviewed.qrels
    """
    from ..catalogue import load_catalogue
    from ..judgments import read_qrels, write_qrels
    from ..review import import_sheets

    result = import_sheets(sheets, load_catalogue(catalogue),
                           base=read_qrels(base) if base else None)
    write_qrels(output, result.qrels)
    judgments = sum(len(v) for v in result.qrels.values())
    show({**result.report.as_dict(), "output": output}, as_json,
         lambda d: text.review_import(d, judgments, len(result.qrels)))
    if result.report.reviewed == 0:
        echo_err([f"warning: no sheet has a verdict yet, so {output} holds the silver "
                  "grades unchanged: machine-made estimates, not reviewed judgments"])


@main.command()
@in_file("qrels_a")
@in_file("qrels_b")
@in_file("runs", nargs=-1, required=True)
@names_option
@click.option("-m", "--metric", default="ndcg@10", show_default=True,
              help="Metric the systems are ranked by.")
@click.option("--resamples", type=click.IntRange(min=0), default=2000, show_default=True,
              help="Bootstrap resamples over queries for the intervals of tau and rho (0: "
                   "none). Default 2,000, fewer than compare's 10,000: an interval's ends "
                   "settle sooner than a small p-value does, and each resample re-scores "
                   "every run under both sets.")
@seed_option
@partial_option
@json_option
def agree(qrels_a: str, qrels_b: str, runs: tuple[str, ...], names: tuple[str, ...],
          metric: str, resamples: int, seed: int, partial_overlap: bool,
          as_json: bool) -> None:
    """Do two judgment sets (silver vs reviewed, silver vs human) rank systems alike?

    Scores each run under both sets, then gives Kendall's tau-b and Spearman's rho
    between the two system rankings with 95% bootstrap intervals over queries (shared
    queries are drawn together for both sets), and the pairs of systems whose order
    flips. High tau means the cheaper set can be trusted to choose between systems.
    Each flip says how often each set keeps its order over resampled queries, and the
    pairs each set settles (keeps in order in 90% of resamples) are counted with the
    other set's swaps: a flip on a pair neither set settles is noise, not disagreement.

    \b
    Example:
      trawl agree silver/qf.qrels reviewed.qrels runs/silver-minilm.run runs/silver-bm25.run \\
          runs/silver-static.run
      trawl agree silver.qrels human.qrels a.run b.run c.run -m mrr@10
    """
    from ..agreement import agree as agree_sets
    from ..inputs import read_agreement_inputs

    a, b, loaded = read_agreement_inputs(qrels_a, qrels_b, runs, names, partial_overlap)
    res = agree_sets(a, b, list(loaded),
                     metric=metric, resamples=resamples, seed=seed)
    show({**res.as_dict(), "qrels_a": qrels_a, "qrels_b": qrels_b}, as_json, text.agreement)
