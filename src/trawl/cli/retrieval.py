"""`trawl index`, `search`, `fuse` and `distill`: build indexes, make runs."""

from __future__ import annotations

import click

from ..report import text
from ..retrievers.spec import SPEC_FORMS
from . import (cache_dir_option, catalogue_option, echo_err, in_file, json_option, main,
               out_option, quiet_option, reject, show, template_option,
               threads_option)

ENCODER_HELP = f"Encoder: {', '.join(SPEC_FORMS[:-1])} or {SPEC_FORMS[-1]}."


def engine_options(command):
    """--engine, --address and --workers: where an index build embeds (index and eval)."""
    for option in reversed([
            click.option("--engine", type=click.Choice(["local", "ray"]), default="local",
                         show_default=True,
                         help="Embed in this process, or on Ray workers (one model load per "
                              "worker; pip install 'trawl[ray]')."),
            click.option("--address", default=None, metavar="ADDR",
                         help="Ray cluster to join, e.g. ray://head:10001 or auto (default: "
                              "start a local Ray runtime)."),
            click.option("--workers", type=click.IntRange(min=1), default=None,
                         help="Ray workers embedding at once [the cluster's CPUs]."),
    ]):
        command = option(command)
    return command


def engine_conflicts(engine: str, address: str | None,
                     workers: int | None) -> list[tuple[bool, str]]:
    return [(address is not None and engine != "ray",
             f"--address needs --engine ray (got --engine {engine})"),
            (workers is not None and engine != "ray",
             f"--workers needs --engine ray (got --engine {engine})")]


@main.command("index")
@in_file("catalogue")
@click.option("-e", "--encoder", "spec", required=True, metavar="SPEC", help=ENCODER_HELP)
@out_option(folder=True, required=True,
            help="Index folder to create or update (replaced atomically).")
@click.option("--ann", type=click.Choice(["exact", "hnsw"]), default="exact", show_default=True,
              help="exact inner-product search, or an approximate HNSW graph (faiss).")
@click.option("--hnsw-m", type=int, default=None, help="HNSW links per node [32].")
@click.option("--hnsw-ef-construction", type=int, default=None,
              help="HNSW candidate list while building [200].")
@click.option("--hnsw-ef-search", type=int, default=None,
              help="HNSW candidate list while searching [128].")
@click.option("--store", type=click.Choice(["fp32", "int8", "binary"]), default="fp32",
              show_default=True, help="How vectors are kept: as computed, 8 bits a number "
                                      "(a quarter of the bytes; with --ann hnsw the graph "
                                      "walks these codes), or 1 bit a number (1/32) with "
                                      "the top candidates re-scored (exact search only).")
@click.option("--rescore", type=click.Choice(["int8", "fp32"]), default=None,
              help="Vectors that re-score a binary store's candidates [int8].")
@click.option("--batch-size", type=int, default=32, show_default=True,
              help="Texts per encoder batch.")
@engine_options
@cache_dir_option
@template_option
@quiet_option
@json_option
def index_command(catalogue: str, spec: str, output: str, ann: str, hnsw_m: int | None,
                  hnsw_ef_construction: int | None, hnsw_ef_search: int | None, store: str,
                  rescore: str | None, batch_size: int, engine: str, address: str | None,
                  workers: int | None, cache_dir: str | None, template: str | None,
                  quiet: bool, as_json: bool) -> None:
    """Build or incrementally update the search index of a catalogue with one encoder.

    Vectors are cached by encoder and text, so re-indexing embeds only new or edited
    items and an interrupted build resumes where it stopped.

    \b
    Example:
      trawl index corpora/quillfern.jsonl -e minilm -o idx/minilm
      trawl index corpora/quillfern.jsonl -e bm25 -o idx/bm25
      trawl index items.jsonl -e minilm-int8 -o idx/int8 --ann hnsw
      trawl index items.jsonl -e minilm-onnx -o idx/minilm-onnx
      trawl index items.jsonl -e minilm -o idx/minilm-binary-vectors --store binary
      trawl index items.jsonl -e minilm -o idx/minilm-hnsw-int8 --ann hnsw --store int8
      trawl index items.jsonl -e minilm -o idx/minilm --engine ray --workers 8
    """
    from ..catalogue import load_catalogue
    from ..engines import make_engine
    from ..index import HnswParams, build_index
    from ..retrievers.spec import parse_spec
    from ..stores import StoreSettings

    given = {"m": hnsw_m, "ef_construction": hnsw_ef_construction, "ef_search": hnsw_ef_search}
    reject([(v is not None and ann != "hnsw",
             f"--hnsw-{k.replace('_', '-')} needs --ann hnsw (got --ann {ann})")
            for k, v in given.items()]
           + [(store == "binary" and ann != "exact",
               f"--store binary and --ann {ann} conflict: bit codes are scanned by Hamming "
               "distance and re-scored, not walked as a graph; use --store int8 or fp32"),
              (rescore is not None and store != "binary",
               f"--rescore needs --store binary (got --store {store})")]
           + engine_conflicts(engine, address, workers))
    hnsw = HnswParams(**{k: v for k, v in given.items() if v is not None}) \
        if ann == "hnsw" else None
    encoder = parse_spec(spec)
    settings = StoreSettings(store, rescore or "int8")
    info = build_index(load_catalogue(catalogue, template), encoder, output, ann=ann,
                       cache_dir=cache_dir, batch_size=batch_size, quiet=quiet, hnsw=hnsw,
                       store=settings, engine=make_engine(engine, address, workers))
    show(info.as_dict(), as_json, text.index_built)


@main.command()
@click.argument("index", type=click.Path(file_okay=False))
@in_file("queries")
@out_option(required=True,
            help="TREC run to write; latency figures go to OUTPUT.latency.json.")
@click.option("--results", type=click.IntRange(min=1), default=None, metavar="N",
              help="Results kept per query (default: 100, or every item when the catalogue "
                   "holds fewer); more than the catalogue holds is an error naming its size.")
@catalogue_option(False, "Catalogue to check the index against (default: the file it was "
                         "built from, if it is still there).")
@click.option("--name", default=None,
              help="Run name for the tag column (default: output file name without extension).")
@click.option("--warmup", type=int, default=5, show_default=True,
              help="Queries run before timing starts (not counted).")
@threads_option
@quiet_option
@json_option
def search(index: str, queries: str, output: str, results: int | None,
           catalogue: str | None, name: str | None, warmup: int, threads: int | None,
           quiet: bool, as_json: bool) -> None:
    """Search an index with every query; write a TREC run and its latency figures.

    Latency is encode + search of one query at a time, as a search box sends them
    (p50/p95/p99 after warm-up); throughput is the whole set in one batch. Latency
    depends on the compute threads: time with the count you will deploy (--threads).

    \b
    Example:
      trawl search idx/minilm qrels/quillfern-gold.queries.tsv -o runs/minilm.run
      trawl search idx/minilm queries.tsv -o runs/minilm-1t.run --threads 1
      trawl search idx/bm25 queries.tsv -o runs/bm25.run --results 20 --json
    """
    from ..index import open_recorded
    from ..latency import measure_search, write_latency
    from ..queries import read_queries
    from ..files import check_writable
    from ..runs import name_from_path, write_run

    check_writable(output, "run file")  # before the search, not after it
    check_writable(f"{output}.latency.json", "latency file")
    idx, gone = open_recorded(index, catalogue)
    if gone is not None:
        echo_err([f"warning: {gone} (the catalogue this index was built from) is gone; "
                  "cannot check the index is current (give --catalogue)"])
    run, report = measure_search(idx, read_queries(queries), results, warmup=warmup,
                                 quiet=quiet, name=name or name_from_path(output), threads=threads)
    write_run(output, run)
    data = {"run": output, "latency_file": str(write_latency(output, report)),
            **report.as_dict()}
    show(data, as_json, lambda d: text.search(d, len(run)))


@main.command()
@in_file("runs", nargs=-1, required=True)
@out_option(required=True, help="Fused TREC run to write.")
@click.option("--rank-offset", type=click.IntRange(min=0), default=60, show_default=True,
              metavar="C", help="Constant added to every rank, each run giving an item "
                                "1 / (C + rank): larger C weighs lower ranks more evenly "
                                "with the top ones.")
@click.option("--top", type=click.IntRange(min=1), default=None, metavar="N",
              help="Ranks read from each run and kept in the fused run (default: all).")
@click.option("--name", default=None, help="Run name for the tag column (default: rrf-A+B).")
def fuse(runs: tuple[str, ...], output: str, rank_offset: int, top: int | None,
         name: str | None) -> None:
    """Fuse runs with Reciprocal Rank Fusion, e.g. a dense and a BM25 run into a hybrid.

    \b
    Example:
      trawl fuse runs/minilm.run runs/bm25.run -o runs/hybrid.run
    """
    from ..fusion import reciprocal_rank_fusion
    from ..runs import read_run, write_run

    reject([(len(runs) < 2, f"fuse needs at least 2 runs, got {len(runs)}")])
    fused = reciprocal_rank_fusion([read_run(r) for r in runs], k=rank_offset, depth=top,
                                   name=name)
    write_run(output, fused)
    click.echo(text.fused(output, fused.name, len(fused)))


@main.command()
@out_option(folder=True, required=True,
            help="Folder for the static model (replaced atomically).")
@click.option("--vector-size", type=click.IntRange(min=1, max=384), default=256,
              show_default=True, metavar="N",
              help="Numbers per vector of the static model (at most the bundled model's "
                   "384); smaller is faster and coarser.")
@quiet_option
def distill(output: str, vector_size: int, quiet: bool) -> None:
    """Distil a static encoder from the bundled model (model2vec), offline.

    Use the result as -e static:DIR: much faster to index and query, usually less
    accurate; `trawl eval` measures by how much.

    \b
    Example:
      trawl distill -o models/static-256
      trawl index items.jsonl -e static:models/static-256 -o idx/static
    """
    import time

    from ..distill import distill_static

    start = time.perf_counter()
    path = distill_static(output, pca_dims=vector_size, quiet=quiet)
    click.echo(text.distilled(str(path), vector_size, time.perf_counter() - start))
