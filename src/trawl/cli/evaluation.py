"""`trawl eval` and `trawl demo`: the whole evaluation in one command."""

from __future__ import annotations

import click

from ..report import text
from . import (cache_dir_option, emit_json, in_file, json_option, main, metrics_option,
               no_scrub_option, out_option, quiet_option, resamples_option, results_option,
               reject, retime_option, seed_option, step, template_option, threads_option)
from .limits import limits_from, limits_options
from .retrieval import engine_conflicts, engine_options

resamples = resamples_option(10000, 1, "Bootstrap and randomisation resamples. Default "
                                       "10,000, as in compare: p-values near the "
                                       "significance level need that many to be stable.")


def _finish(result, as_json: bool) -> None:
    if as_json:
        emit_json(result.bundle)
        return
    click.echo(text.summary(result.bundle))
    click.echo("\n" + text.evaluation_written(result.out_dir, result.report, result.seconds))


@main.command("eval")
@in_file("catalogue")
@in_file("queries")
@in_file("qrels")
@click.option("-e", "--encoder", "encoders", multiple=True, required=True, metavar="SPEC",
              help="Encoder to evaluate; repeat for several. NAME=SPEC names it in the "
                   "report. Specs: minilm, minilm-int8, minilm-onnx, minilm-onnx-int8, "
                   "static:DIR, st:DIR, onnx:DIR, bm25, bm25;stem=english; add ;store=int8 "
                   "or ;store=binary to keep a dense system's vectors quantised.")
@out_option(folder=True, required=True,
            help="Folder for indexes, runs, tables and report.html.")
@click.option("--fuse", multiple=True, metavar="A+B",
              help="Add a Reciprocal Rank Fusion of these systems; repeat for several.")
@click.option("--baseline", default=None, metavar="NAME",
              help="System every other is compared with (default: the first -e).")
@results_option
@metrics_option
@resamples
@seed_option
@click.option("--judgments", "judged_by", type=click.Choice(["auto", "silver", "human"]),
              default="auto", show_default=True,
              help="Who made the judgments. auto: silver when a trawl synth provenance "
                   "file (PREFIX.jsonl) sits beside PREFIX.qrels, otherwise 'origin "
                   "unknown' (never called human); human: people judged them, say so.")
@click.option("--ann", type=click.Choice(["exact", "hnsw"]), default="exact",
              show_default=True, help="Dense search: exact, or an HNSW graph.")
@engine_options
@cache_dir_option
@template_option
@click.option("--title", default=None, help="Title of the report.")
@no_scrub_option
@retime_option
@threads_option
@limits_options
@quiet_option
@json_option
def eval_command(catalogue: str, queries: str, qrels: str, encoders: tuple[str, ...],
                 output: str, fuse: tuple[str, ...], baseline: str | None, results: int,
                 metrics: tuple[str, ...], resamples: int, seed: int, judged_by: str,
                 ann: str, engine: str, address: str | None, workers: int | None,
                 cache_dir: str | None, template: str | None, title: str | None,
                 no_scrub: bool, retime: bool, threads: int | None, quiet: bool,
                 as_json: bool, **limits: float | str | None) -> None:
    """Index, search, score, compare and analyse misses for every encoder in one go,
    and write report.html.

    Indexes are kept in OUTPUT/indexes and reused while the catalogue and encoder are
    unchanged; vectors come from the embedding cache; a system whose index, queries,
    depth and threads are unchanged keeps its run and latency figures; so reruns finish
    fast. Prints the decision first (which system to ship within --max-latency-ms and
    --max-index-mb, accepting a loss of --margin on the --headline metric, and how many
    judged queries would settle it), then quality against latency with significance
    marks and the headline of the miss table. Under silver judgments every figure is an
    estimate, and the output says so. Latency is timed with --threads compute threads
    when given (the report shows the count); time with what a deployed replica will have.

    \b
    Example:
      trawl synth corpora/quillfern.jsonl -o silver/qf
      trawl eval corpora/quillfern.jsonl silver/qf.queries.tsv silver/qf.qrels \\
        -e minilm -e bm25 --fuse minilm+bm25 -o eval-out --threads 1
      trawl eval items.jsonl q.tsv q.qrels -e minilm -o eval-out --engine ray --address auto
    """
    from pathlib import Path

    from ..engines import make_engine
    from ..metrics import DEFAULT_METRICS
    from ..pipeline import JudgmentSet, evaluate

    reject(engine_conflicts(engine, address, workers))
    runner = make_engine(engine, address, workers)

    silver = {"auto": None, "silver": True, "human": False}[judged_by]
    js = JudgmentSet("judgments", Path(queries), Path(qrels), Path(qrels).name, silver=silver)
    result = evaluate(catalogue, [js], encoders, output, fuse=fuse, baseline=baseline, k=results,
                      metrics=metrics or DEFAULT_METRICS, resamples=resamples, seed=seed,
                      ann=ann, cache_dir=cache_dir, template=template, title=title,
                      scrub_queries=not no_scrub, retime=retime, threads=threads, quiet=quiet,
                      notify=step(quiet or as_json), limits=limits_from(limits), engine=runner)
    _finish(result, as_json)
    if not as_json:
        click.echo(result.bundle["setup"]["notes"]["privacy"])


@main.command()
@out_option(folder=True, default="demo-out", show_default=True,
            help="Folder for everything the demo makes.")
@click.option("-e", "--encoder", "encoders", multiple=True, metavar="SPEC",
              help="Evaluate only these encoders (default: minilm, minilm-int8, minilm-onnx, "
                   "minilm-onnx-int8, 'minilm;store=int8', 'minilm;store=binary', static, "
                   "bm25, 'bm25;stem=english'; 'static' is the model the demo distils).")
@click.option("--fuse", multiple=True, metavar="A+B",
              help="Fused systems (default: minilm+bm25 and minilm+bm25;stem=english when "
                   "their parts are evaluated).")
@click.option("--sample", type=click.IntRange(min=1), default=None,
              help="Synthesise queries from this many items only (stratified by type).")
@resamples
@seed_option
@click.option("--cache-dir", type=click.Path(file_okay=False), default=None, metavar="DIR",
              help="Embedding cache folder (default: $TRAWL_CACHE_DIR, else OUTPUT/cache, so "
                   "the demo leaves nothing outside OUTPUT).")
@retime_option
@threads_option
@limits_options
@quiet_option
@json_option
def demo(output: str, encoders: tuple[str, ...], fuse: tuple[str, ...], sample: int | None,
         resamples: int, seed: int, cache_dir: str | None, retime: bool, threads: int | None,
         quiet: bool, as_json: bool, **limits: float | str | None) -> None:
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
    from ..pipeline import DEMO_ENCODERS, demo as run_demo

    result = run_demo(output, encoders=encoders or DEMO_ENCODERS, fuse=fuse or None,
                      sample=sample, resamples=resamples, seed=seed, retime=retime,
                      cache_dir=cache_dir,
                      threads=threads, quiet=quiet, notify=step(quiet or as_json),
                      limits=limits_from(limits))
    _finish(result, as_json)
