"""The whole evaluation in one call, composed from the public functions of the modules.

``evaluate`` indexes a catalogue with every encoder (reusing indexes whose catalogue,
template and encoder still match, and the embedding cache otherwise), searches each
judgment set's queries while timing them, fuses runs, scores with bootstrap intervals,
compares every system with a baseline, tabulates misses, measures how alike two
judgment sets rank the systems when asked, and writes every artefact plus report.html
into one folder. ``demo`` does all of it on the bundled transit catalogue from nothing.
"""

from __future__ import annotations

import hashlib
import json
import platform
import re
import time
from collections import Counter
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from importlib import metadata
from pathlib import Path
from typing import Any

import numpy as np

from . import __version__
from .latency import check_threads
from .catalogue import Catalogue, check_catalogue, load_catalogue
from .errors import (EncoderMismatchError, InputError, StaleIndexError, TrawlError,
                     UsageError)
from .files import atomic_write, write_text_atomic
from .judgments import Qrels, read_qrels
from .metrics import DEFAULT_METRICS, parse_metrics
from .privacy import KINDS as PRIVACY_KINDS
from .privacy import describe_counts, scrub_texts
from .queries import read_queries
from .retrievers.loading import default_loader
from .retrievers.spec import EncoderSpec, parse_spec
from .fusion import RRF_K, reciprocal_rank_fusion
from .runs import Run, read_run, write_run

Notify = Callable[[str], None]
NAME_CHARS = re.compile(r"[^A-Za-z0-9._+-]+")
DEFAULT_DEPTH = 100
DEFAULT_RESAMPLES = 10000
WORST_QUERIES = 5
MISS_K = 10
LATENCY_WARMUP = 5
VERSIONED_PACKAGES = ("numpy", "torch", "sentence-transformers", "faiss-cpu", "bm25s",
                      "model2vec", "scipy")


# --- what to evaluate ----------------------------------------------------------------------

@dataclass(frozen=True)
class JudgmentSet:
    """Queries and their judgments, evaluated together.

    ``silver`` None means: silver when a ``trawl synth`` provenance file
    (``PREFIX.jsonl`` beside ``PREFIX.qrels``) is present, human otherwise.
    """

    name: str
    queries: Path
    qrels: Path
    label: str = ""
    silver: bool | None = None
    how: str = ""  # how the judgments were made; described automatically when empty


@dataclass(frozen=True)
class System:
    """A named system: one encoder spec, or a fusion of other systems (``parts``)."""

    name: str
    spec: EncoderSpec | None
    parts: tuple[str, ...] = ()


@dataclass(frozen=True)
class EvalResult:
    """Where everything went, and the bundle the report was rendered from."""

    out_dir: Path
    report: Path
    bundle: Mapping[str, Any]
    seconds: float


def clean_name(text: str) -> str:
    """A system name usable as a file name and a TREC run tag (no spaces)."""
    return NAME_CHARS.sub("-", text).strip("-") or "system"


def parse_system(value: str, check_paths: bool = True) -> System:
    """``SPEC`` or ``NAME=SPEC``; the default name is the spec with folders shortened."""
    head, eq, rest = value.partition("=")
    if eq and head and not any(c in head for c in ":;"):
        name, spec_text = head.strip(), rest
        if clean_name(name) != name or "+" in name:
            raise UsageError(f"system name {name!r} may only use letters, digits and . _ - "
                             "('+' joins the systems of a --fuse)")
    else:
        name, spec_text = "", value
    spec = parse_spec(spec_text, check_paths=check_paths)
    if not name:
        shown = str(spec)
        if spec.path:
            shown = shown.replace(f"{spec.kind}:{spec.path}", f"{spec.kind}-{Path(spec.path).name}")
        name = clean_name(shown)
    return System(name, spec)


def plan_systems(encoders: Sequence[str], fuse: Sequence[str] = (),
                 check_paths: bool = True) -> list[System]:
    """Encoder systems then fused ones (``A+B`` of encoder systems, by name or spec);
    names unique."""
    if not encoders:
        raise UsageError("no encoders given; add at least one -e SPEC, e.g. -e minilm -e bm25")
    systems = [parse_system(e, check_paths) for e in encoders]
    by_name = {s.name: s for s in systems}
    if len(by_name) != len(systems):
        dup = next(n for n, c in Counter(s.name for s in systems).items() if c > 1)
        raise UsageError(f"two encoders are both named {dup!r}; name them apart with "
                         f"-e NAME=SPEC")
    by_spec = {str(s.spec): s.name for s in systems}
    for f in fuse:
        parts = [p.strip() for p in f.split("+")]
        if len(parts) < 2 or not all(parts):
            raise UsageError(f"--fuse {f!r}: give two or more systems joined by '+', "
                             "e.g. --fuse minilm+bm25")
        names = []
        for p in parts:
            if p in by_name:
                names.append(p)
                continue
            try:
                canonical = str(parse_spec(p, check_paths=False))
            except UsageError:
                canonical = None
            if canonical not in by_spec:
                raise UsageError(f"--fuse {f!r}: {p!r} is not one of the systems given with "
                                 f"-e ({', '.join(by_name)})")
            names.append(by_spec[canonical])
        fused = System("+".join(names), None, tuple(names))
        if any(s.name == fused.name for s in systems):
            raise UsageError(f"--fuse {f!r} is given twice")
        systems.append(fused)
    return systems


# --- judgment sets ---------------------------------------------------------------------------

def describe_silver(sidecar: Path) -> str:
    """How a silver set was made, from its provenance lines (styles, seeds)."""
    styles: Counter[str] = Counter()
    seeds: set[Any] = set()
    for n, line in enumerate(sidecar.read_text(encoding="utf-8").splitlines(), start=1):
        if not line.strip():
            continue
        try:
            rec = json.loads(line)
        except json.JSONDecodeError as exc:
            raise InputError(sidecar, f"malformed JSON: {exc.msg}", line=n) from None
        styles[str(rec.get("style", "unknown"))] += 1
        seeds.add(rec.get("seed"))
    mix = ", ".join(f"{s} {c}" for s, c in sorted(styles.items(), key=lambda kv: (-kv[1], kv[0])))
    seed_text = ", ".join(str(s) for s in sorted(seeds, key=str))
    return f"synthesised from the catalogue by trawl synth ({mix}; seed {seed_text})"


@dataclass(frozen=True)
class _Loaded:
    spec: JudgmentSet
    queries: dict[str, str]
    qrels: Qrels
    silver: bool
    how: str


def _load_set(js: JudgmentSet) -> _Loaded:
    queries = read_queries(js.queries)
    qrels = read_qrels(js.qrels)
    missing = [q for q in qrels if q not in queries]
    if missing:
        raise InputError(js.qrels, f"{len(missing)} judged query id(s) have no text in "
                         f"{js.queries}, e.g. {missing[0]!r}; give the queries file that "
                         "goes with these qrels")
    from .scores import silver_provenance

    sidecar = silver_provenance(js.qrels)
    silver = js.silver if js.silver is not None else sidecar is not None
    if js.how:
        how = js.how
    elif silver and sidecar is not None:
        how = describe_silver(sidecar)
    elif silver:
        how = "machine-made judgments (marked silver when run)"
    else:
        how = "judged by people" if js.silver is False else (
            "no synth provenance beside the qrels, so treated as human judgments")
    return _Loaded(js, queries, qrels, silver, how)


# --- indexing and searching ------------------------------------------------------------------

def _open_or_build(catalogue: Catalogue, spec: EncoderSpec, folder: Path, ann: str,
                   cache_dir: Path | None, quiet: bool, loader):
    """Reuse the index in ``folder`` when it still matches; otherwise (re)build it."""
    from .index import build_index, open_index

    try:
        index = open_index(folder, catalogue, str(spec), loader=loader)
        if index.manifest["search"]["ann"] == ann:
            if not spec.lexical:
                index.encoder()  # refuses changed model files
            return index, True
    except (InputError, StaleIndexError, EncoderMismatchError):
        pass
    build_index(catalogue, str(spec), folder, ann=ann, cache_dir=cache_dir, quiet=quiet,
                loader=loader)
    return open_index(folder, catalogue, str(spec), loader=loader), False


def _percentiles(ms: Sequence[float]) -> dict[str, float]:
    arr = np.asarray(ms, dtype=np.float64)
    return {"p50_ms": round(float(np.percentile(arr, 50)), 4),
            "p95_ms": round(float(np.percentile(arr, 95)), 4),
            "p99_ms": round(float(np.percentile(arr, 99)), 4),
            "mean_ms": round(float(arr.mean()), 4)}


def measure_fused(indexes: Sequence[Any], names: Sequence[str], queries: Mapping[str, str],
                  k: int, name: str, warmup: int = LATENCY_WARMUP) -> dict[str, Any]:
    """Latency of a fused system served one query at a time: every part searched in
    turn, then fused (the parts run one after the other, as a simple service would)."""
    texts = list(queries.items())

    def serve(qid: str, text: str) -> None:
        runs = [Run(n, {qid: ix.search_one(text, k)}) for n, ix in zip(names, indexes)]
        reciprocal_rank_fusion(runs, RRF_K, depth=k, name=name)

    for i in range(warmup):
        serve(*texts[i % len(texts)])
    per_query = []
    for qid, text in texts:
        start = time.perf_counter_ns()
        serve(qid, text)
        per_query.append((time.perf_counter_ns() - start) / 1e6)
    out = _percentiles(per_query)
    out.update(queries_timed=len(per_query), warmup=warmup, k=k,
               method=f"per-query: search of each part ({', '.join(names)}) one query at a "
                      f"time, then Reciprocal Rank Fusion (k={RRF_K}); {warmup} warm-up "
                      "queries excluded")
    return out


def _digest(obj: Any) -> str:
    return hashlib.sha256(json.dumps(obj, sort_keys=True, ensure_ascii=False).encode()
                          ).hexdigest()[:16]


def search_key(manifest: Mapping[str, Any], queries: Mapping[str, str], depth: int,
               threads: int) -> str:
    """What a timed search depends on: the index (not when it was built), the queries in
    order, the depth, the compute threads in force and the timing procedure."""
    index = {k: v for k, v in manifest.items() if k != "build"}
    return _digest({"index": index, "queries": list(queries.items()), "depth": depth,
                    "threads": threads, "warmup": LATENCY_WARMUP, "trawl": __version__})


def fused_key(part_keys: Sequence[str], depth: int) -> str:
    return _digest({"parts": list(part_keys), "rrf_k": RRF_K, "depth": depth,
                    "trawl": __version__})


def previous_search(run_path: Path, name: str, key: str, queries: Mapping[str, str]
                    ) -> tuple[Run, dict[str, Any]] | None:
    """The run and latency figures an earlier evaluation wrote for the same inputs."""
    sidecar = Path(f"{run_path}.latency.json")
    try:
        latency = json.loads(sidecar.read_text(encoding="utf-8"))
        if not isinstance(latency, dict) or latency.get("inputs") != key:
            return None
        run = read_run(run_path, name=name)
    except (OSError, ValueError, TrawlError):
        return None
    return Run(name, {q: run.results.get(q, ()) for q in queries}), latency


def _merge_runs(name: str, runs: Sequence[Run]) -> Run:
    """One run over the queries of several judgment sets (for agreement)."""
    merged: dict[str, tuple] = {}
    for r in runs:
        for qid, ranked in r.results.items():
            if qid in merged and merged[qid] != ranked:
                raise UsageError(f"query id {qid!r} appears in two judgment sets with "
                                 "different results; give the sets distinct query ids")
            merged[qid] = ranked
    return Run(name, merged)


# --- the evaluation ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Searched:
    """Every system's run and latency figures for one query set."""

    runs: Mapping[str, Run]
    latency: Mapping[str, Mapping[str, Any]]
    reused: tuple[str, ...]  # systems whose run and figures came from an earlier evaluation


def search_set(systems: Sequence[System], indexes: Mapping[str, Any],
               queries: Mapping[str, str], folder: Path, depth: int, retime: bool,
               quiet: bool, say: Notify, label: str, threads: int | None = None) -> Searched:
    """Search (timed under ``threads`` compute threads; None: the libraries' defaults)
    with every system, writing ``folder/NAME.run`` and its latency sidecar; an earlier
    run for exactly the same inputs, thread count included, is kept unless ``retime``."""
    from .latency import measure_search, use_threads

    runs: dict[str, Run] = {}
    latency: dict[str, dict[str, Any]] = {}
    keys: dict[str, str] = {}
    reused: list[str] = []
    with use_threads(threads) as in_force:
        for s in systems:
            run_path = folder / f"{s.name}.run"
            keys[s.name] = (search_key(indexes[s.name].manifest, queries, depth, in_force)
                            if s.spec is not None else
                            fused_key([keys[p] for p in s.parts], depth))
            earlier = None if retime else previous_search(run_path, s.name, keys[s.name],
                                                          queries)
            if earlier is not None:
                say(f"search {label}: {s.name}: reusing {run_path} (same index, queries, "
                    "depth, threads)")
                runs[s.name], latency[s.name] = earlier
                reused.append(s.name)
                continue
            say(f"search {label}: {s.name} ({len(queries)} queries, timed one at a time, "
                f"{in_force} thread(s))")
            if s.spec is not None:
                run, report = measure_search(indexes[s.name], queries, depth,
                                             warmup=LATENCY_WARMUP, quiet=quiet, name=s.name)
                lat = report.as_dict()
            else:
                run = reciprocal_rank_fusion([runs[p] for p in s.parts], RRF_K, depth=depth,
                                             name=s.name)
                lat = measure_fused([indexes[p] for p in s.parts], s.parts, queries, depth,
                                    s.name)
                lat["batch_queries_per_s"] = _fused_throughput(latency, s.parts)
                lat["threads"] = in_force
            lat["inputs"] = keys[s.name]
            runs[s.name], latency[s.name] = run, lat
            write_run(run_path, run)
            _write_json(Path(f"{run_path}.latency.json"), lat)
    return Searched(runs, latency, tuple(reused))


def evaluate(catalogue: str | Path | Catalogue, sets: Sequence[JudgmentSet],
             encoders: Sequence[str], out_dir: str | Path, *, fuse: Sequence[str] = (),
             baseline: str | None = None, k: int = DEFAULT_DEPTH,
             metrics: Sequence[str] = DEFAULT_METRICS, resamples: int = DEFAULT_RESAMPLES,
             seed: int = 0, alpha: float = 0.05, ann: str = "exact",
             cache_dir: str | Path | None = None, template: str | None = None,
             agreement: tuple[str, str] | None = None, title: str | None = None,
             scrub_queries: bool = False, retime: bool = False, threads: int | None = None,
             quiet: bool = False, notify: Notify | None = None) -> EvalResult:
    """Index, search (timed), fuse, score, compare, tabulate misses and write the report.

    ``encoders`` are specs (``NAME=SPEC`` to name one); ``fuse`` entries join system
    names with ``+``. The baseline defaults to the first system. ``agreement`` names two
    judgment sets whose system rankings are compared. ``scrub_queries`` replaces personal
    data (``privacy.scrub``) in the query text the report and tables show; searches
    still use the original text. ``threads`` is the compute thread count searches are
    timed with (None: the libraries' defaults); time with what the deployment will have.
    A system whose index, queries, depth and thread count are unchanged since an earlier
    evaluation into the same folder keeps that run and its latency figures (the report
    says so); ``retime`` searches and times everything again.
    """
    from .agreement import agree
    from .compare import compare_scores
    from .misses import miss_table
    from .scores import score_runs

    started = time.perf_counter()
    say = notify or (lambda _msg: None)
    # everything that can be wrong with the request is checked before any work
    systems = plan_systems(encoders, fuse)
    names = [s.name for s in systems]
    baseline = baseline or names[0]
    if baseline not in names:
        raise UsageError(f"--baseline {baseline!r} is not one of the systems: {', '.join(names)}")
    metric_names = [m.name for m in parse_metrics(metrics)]
    if k < 1:
        raise UsageError(f"k={k} must be >= 1")
    if resamples < 1:
        raise UsageError(f"resamples={resamples} must be >= 1")
    check_threads(threads)
    if not sets:
        raise UsageError("no judgment sets to evaluate")
    set_names = [js.name for js in sets]
    if len(set(set_names)) != len(set_names) or any(clean_name(n) != n for n in set_names):
        raise UsageError(f"judgment set names must be distinct plain names, got {set_names}")
    if agreement and not set(agreement) <= set(set_names):
        raise UsageError(f"agreement between {agreement} needs both judgment sets; "
                         f"have {', '.join(set_names)}")
    if agreement and len(systems) < 2:
        raise UsageError("agreement needs at least two systems to rank")
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise UsageError(f"-o {out} exists and is not a folder")
    cat = catalogue if isinstance(catalogue, Catalogue) else load_catalogue(catalogue, template)
    loaded = [_load_set(js) for js in sets]
    depth = min(k, len(cat))
    cache = Path(cache_dir) if cache_dir is not None else None
    loader = default_loader()

    indexes: dict[str, Any] = {}
    for s in systems:
        if s.spec is None:
            continue
        say(f"index {s.name} ({len(cat)} items)")
        indexes[s.name], reused = _open_or_build(cat, s.spec, out / "indexes" / s.name, ann,
                                                 cache, quiet, loader)
        if reused:
            say(f"  reused {out / 'indexes' / s.name}")

    scrubbed = dict.fromkeys(PRIVACY_KINDS, 0)
    evaluations = []
    searched: dict[str, Searched] = {}
    for ld in loaded:
        js = ld.spec
        folder = out / js.name
        found = searched[js.name] = search_set(systems, indexes, ld.queries, folder / "runs",
                                               depth, retime, quiet, say, js.name,
                                               threads)
        runs, latency = found.runs, found.latency
        ordered = [runs[baseline]] + [runs[n] for n in names if n != baseline]
        say(f"score {js.name}: {len(ld.qrels)} queries, {resamples} bootstrap resamples")
        scores = score_runs(ld.qrels, ordered, metric_names, cat, resamples, seed, alpha)
        comparison = compare_scores(scores, resamples, seed, alpha=alpha) if len(ordered) > 1 \
            else None
        shown = ld.queries
        if scrub_queries:
            shown, counts = scrub_texts(ld.queries)
            for kind, n in counts.items():
                scrubbed[kind] += n
        misses = [miss_table(ld.qrels, runs[n], cat, min(MISS_K, depth), WORST_QUERIES,
                             shown) for n in names]
        _write_tables(folder, scores, comparison, misses)
        evaluations.append(_evaluation_entry(ld, names, baseline, latency, scores, comparison,
                                             misses))

    agreement_entry = None
    if agreement:
        a, b = agreement
        say(f"agreement: {a} vs {b}")
        merged = [_merge_runs(n, [searched[a].runs[n], searched[b].runs[n]]) for n in names]
        qrels = {ld.spec.name: ld.qrels for ld in loaded}
        ag = agree(qrels[a], qrels[b], merged, metric=metric_names[0], resamples=resamples,
                   seed=seed, confidence=1 - alpha)
        _write_json(out / "agreement.json", ag.as_dict())
        labels = {ld.spec.name: ld.spec.label or ld.spec.name for ld in loaded}
        agreement_entry = {"a": a, "b": b, "a_label": labels[a], "b_label": labels[b],
                           **_agreement_fields(ag.as_dict())}

    from .report.terminal import silver_note

    for ev in evaluations:
        ev["judged_by"] = silver_note(ev, agreement_entry)
    bundle = {
        "format": "trawl-results/1",
        "title": title or f"Search evaluation of {Path(cat.path).name}",
        "trawl_version": __version__,
        "setup": {
            "catalogue": {"path": cat.path, "fingerprint": cat.fingerprint, "items": len(cat),
                          "types": cat.type_counts()},
            "metrics": metric_names, "primary": metric_names[0], "depth": depth,
            "resamples": resamples, "seed": seed, "alpha": alpha,
            "notes": _notes(systems, k, depth, ann, cat, list(searched.values())),
            "versions": _versions(),
        },
        "systems": [_system_entry(s, indexes, cat) for s in systems],
        "evaluations": evaluations,
        "agreement": agreement_entry,
    }
    if scrub_queries:
        bundle["setup"]["scrubbed"] = scrubbed
        bundle["setup"]["notes"]["privacy"] = scrub_note(scrubbed)
    _write_json(out / "results.json", bundle)
    from .report.html import render_html

    report = out / "report.html"
    write_text_atomic(report, render_html(bundle))
    return EvalResult(out, report, bundle, time.perf_counter() - started)


def scrub_note(counts: Mapping[str, int]) -> str:
    return f"scrubbed from query text in the report: {describe_counts(counts)}"


def _fused_throughput(latency: Mapping[str, Mapping[str, Any]], parts: Sequence[str]) -> float:
    """Batch throughput of a fusion: the parts' batch times add up (fusion itself is
    negligible next to them)."""
    seconds = sum(1 / latency[p]["batch_queries_per_s"] for p in parts
                  if latency[p].get("batch_queries_per_s"))
    return round(1 / seconds, 4) if seconds > 0 else 0.0


def _evaluation_entry(ld: _Loaded, names: Sequence[str], baseline: str,
                      latency: Mapping[str, Mapping[str, Any]], scores, comparison,
                      misses) -> dict[str, Any]:
    from .scores import TYPE_RULE

    js = ld.spec
    warnings = list(dict.fromkeys(
        list(scores.warnings) + (list(comparison.warnings) if comparison else [])))
    base_misses = next(m for m in misses if m.run == baseline)
    return {
        "name": js.name, "label": js.label or js.name, "silver": ld.silver, "how": ld.how,
        "queries_file": str(js.queries), "qrels_file": str(js.qrels),
        "queries": len(ld.qrels), "judgments": sum(len(v) for v in ld.qrels.values()),
        "baseline": baseline,
        "latency": {n: {key: latency[n].get(key) for key in
                        ("p50_ms", "p95_ms", "p99_ms", "mean_ms")}
                    | {"queries_per_s": latency[n].get("batch_queries_per_s")} for n in names},
        "scores": scores.score_rows(),
        "comparison": [r.as_dict() for r in comparison.rows] if comparison else [],
        "corrected": _corrected_test(comparison),
        "misses": [{"run": m.run, "k": m.k, "rows": [r.as_dict() for r in m.rows]}
                   for m in misses],
        "miss_headline": base_misses.headline,
        "worst": base_misses.as_dict()["worst"],
        "type_rule": TYPE_RULE[0].upper() + TYPE_RULE[1:] + ".",
        "warnings": warnings,
    }


def _corrected_test(comparison) -> str:
    """Which test's p-values the Holm correction was applied to, in words."""
    if comparison is None:
        return ""
    rule = comparison.as_dict()["correction"]
    return "randomisation" if "randomisation" in rule else "bootstrap"


def _agreement_fields(ag: Mapping[str, Any]) -> dict[str, Any]:
    return {"metric": ag["metric"], "shared": ag["shared_queries"],
            "queries_a": ag["queries_a"], "queries_b": ag["queries_b"],
            "tau": ag["kendall_tau_b"], "rho": ag["spearman_rho"],
            "systems": ag["systems"], "flips": ag["flips"]}


def _system_entry(s: System, indexes: Mapping[str, Any], cat: Catalogue) -> dict[str, Any]:
    if s.spec is None:
        size = sum(indexes[p].bytes for p in s.parts)
        return {"name": s.name, "spec": f"rrf({', '.join(s.parts)}; k={RRF_K})",
                "kind": "fused", "fingerprint": None, "dimensions": None,
                "index_bytes": size, "bytes_per_item": round(size / len(cat), 1)}
    info = indexes[s.name].info
    return {"name": s.name, "spec": str(s.spec),
            "kind": "lexical" if s.spec.lexical else s.spec.kind,
            "fingerprint": info.encoder_fingerprint, "dimensions": info.dim or None,
            "index_bytes": info.bytes, "bytes_per_item": round(info.bytes / len(cat), 1)}


def _notes(systems: Sequence[System], k: int, depth: int, ann: str, cat: Catalogue,
           searched: Sequence[Searched]) -> dict[str, str]:
    notes = {"search": f"{'exact inner product' if ann == 'exact' else ann.upper()} "
                       f"(dense), top {depth} per query"}
    if depth < k:
        notes["search"] += f" (asked for {k}; the catalogue has {len(cat)} items)"
    if any(s.spec is None for s in systems):
        notes["fusion"] = f"Reciprocal Rank Fusion, k={RRF_K}, of each part's top {depth}"
    cpu = next((f"{lat['cpu']}, {lat['threads']} thread(s)" for found in searched
                for lat in found.latency.values() if lat.get("cpu")), "")
    if cpu:
        notes["latency"] = (f"one query at a time (encode + search), {LATENCY_WARMUP} "
                            f"warm-up queries excluded; {cpu}")
    reused = list(dict.fromkeys(n for found in searched for n in found.reused))
    if reused:
        notes["reused"] = (f"runs and latency of {', '.join(reused)} come from an earlier "
                           "evaluation with the same index, queries, depth and threads "
                           "(--retime measures again)")
    notes["text template"] = repr(cat.template.pattern)
    return notes


def _versions() -> dict[str, str]:
    out = {"trawl": __version__, "python": platform.python_version()}
    for pkg in VERSIONED_PACKAGES:
        try:
            out[pkg] = metadata.version(pkg)
        except metadata.PackageNotFoundError:
            continue
    return out


def _write_json(path: Path, obj: Any) -> None:
    with atomic_write(path) as fh:
        json.dump(obj, fh, indent=2, ensure_ascii=False)
        fh.write("\n")


def _write_tables(folder: Path, scores, comparison, misses) -> None:
    """Every table of one judgment set as JSON and CSV."""
    from .compare import CSV_COLUMNS
    from .misses import CSV_COLUMNS as MISS_COLUMNS
    from .tables import write_csv

    _write_json(folder / "scores.json", scores.as_dict())
    write_csv(folder / "scores.csv", scores.score_rows(),
              ["run", "metric", "type", "n", "mean", "low", "high"])
    write_csv(folder / "per-query.csv", scores.per_query_rows(),
              ["run", "qid", "types", *scores.metrics])
    if comparison is not None:
        _write_json(folder / "comparison.json", comparison.as_dict())
        write_csv(folder / "comparison.csv", [r.as_dict() for r in comparison.rows],
                  CSV_COLUMNS)
    _write_json(folder / "misses.json", [m.as_dict() for m in misses])
    write_csv(folder / "misses.csv",
              [{"run": m.run, "k": m.k, **r.as_dict()} for m in misses for r in m.rows],
              ["run", "k", *MISS_COLUMNS])


# --- the demo -----------------------------------------------------------------------------------

DEMO_CATALOGUE = Path("corpora/quillfern.jsonl")
DEMO_GOLD_QUERIES = Path("qrels/quillfern-gold.queries.tsv")
DEMO_GOLD_QRELS = Path("qrels/quillfern-gold.qrels")
DEMO_ENCODERS = ("minilm", "minilm-int8", "static", "bm25")
DEMO_FUSE = ("minilm+bm25",)
STATIC_ALIAS = "static"  # in the demo, the static model it distils itself


def demo_data_root() -> Path:
    """The source checkout holding the demo data (trawl installed in editable mode)."""
    root = Path(__file__).resolve().parents[2]
    missing = [p for p in (DEMO_CATALOGUE, DEMO_GOLD_QUERIES, DEMO_GOLD_QRELS)
               if not (root / p).is_file()]
    if missing:
        raise TrawlError(f"demo data not found: {root / missing[0]} is missing; the demo "
                         "runs from a source checkout installed with `pip install -e .` "
                         "(or `make demo`)")
    return root


def demo(out_dir: str | Path = "demo-out", *, encoders: Sequence[str] = DEMO_ENCODERS,
         fuse: Sequence[str] | None = None, sample: int | None = None,
         resamples: int = DEFAULT_RESAMPLES, seed: int = 0,
         cache_dir: str | Path | None = None, retime: bool = False,
         threads: int | None = None, quiet: bool = False,
         notify: Notify | None = None) -> EvalResult:
    """The whole job on the bundled transit catalogue, from an empty folder.

    Checks the catalogue, distils the static encoder (kept for reruns), synthesises
    silver queries, evaluates every system against the silver and the hand-judged gold
    set, and measures how alike the two sets rank the systems. ``static`` among the
    encoders means the distilled model; ``sample`` limits the items queries are
    synthesised from (for quick runs). The embedding cache defaults to ``OUT/cache``.
    ``threads`` is passed to ``evaluate``.
    """
    from .distill import distill_static
    from .synth import synthesise, write_silver

    say = notify or (lambda _msg: None)
    root = demo_data_root()
    out = Path(out_dir)
    if fuse is None:
        fuse = tuple(f for f in DEMO_FUSE if set(f.split("+")) <= set(encoders))
    static_dir = out / "models" / "static"
    specs = [f"{STATIC_ALIAS}=static:{static_dir}" if e == STATIC_ALIAS else e
             for e in encoders]
    plan_systems(specs, fuse, check_paths=False)  # reject bad options before any work
    check_threads(threads)
    cat = load_catalogue(root / DEMO_CATALOGUE)
    check = check_catalogue(cat, unit="words")
    say(f"check {DEMO_CATALOGUE}: {check.items} items, "
        + ", ".join(f"{n} {t}" for t, n in check.types.items())
        + f"; {len(check.warnings)} warning(s)")
    if STATIC_ALIAS in encoders:
        if (static_dir / "config.json").is_file():
            say(f"distil static encoder: reusing {static_dir}")
        else:
            say(f"distil static encoder from the bundled model into {static_dir}")
            distill_static(static_dir, quiet=quiet)
    cache = cache_dir if cache_dir is not None else out / "cache"
    # two slots per item: on this catalogue's short titles one slot leaves ~30 queries
    silver = synthesise(cat, per_item=2, sample=sample, seed=seed, cache_dir=cache,
                        quiet=quiet)
    prefix = out / "silver" / "quillfern-silver"
    write_silver(prefix, silver)
    say(f"synthesise silver queries: {len(silver.queries)} queries from "
        f"{silver.summary['items']} items")
    sets = [JudgmentSet("silver", Path(f"{prefix}.queries.tsv"), Path(f"{prefix}.qrels"),
                        "silver set", silver=True),
            JudgmentSet("gold", root / DEMO_GOLD_QUERIES, root / DEMO_GOLD_QRELS,
                        "gold set", silver=False,
                        how="written and judged by hand for the demo catalogue")]
    return evaluate(cat, sets, specs, out, fuse=fuse, resamples=resamples, seed=seed,
                    cache_dir=cache,
                    agreement=("silver", "gold") if len(specs) + len(fuse) >= 2 else None,
                    title="Quillfern Regional Transit: rider app search", retime=retime,
                    threads=threads, quiet=quiet, notify=notify)
