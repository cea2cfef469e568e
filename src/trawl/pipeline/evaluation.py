"""The whole evaluation in one call: index, search (timed), fuse, score, compare,
tabulate misses, measure agreement between judgment sets, and write every artefact plus
report.html into one folder. Each step below is one named function."""

from __future__ import annotations

import time
from collections.abc import Mapping, Sequence
from dataclasses import asdict, dataclass, replace
from pathlib import Path
from typing import Any

from .. import __version__
from ..catalogue import Catalogue, load_catalogue
from ..decision import Limits
from ..embedcache import check_cache_dir, default_cache_dir
from ..engines import Engine
from ..errors import UsageError
from ..files import check_writable, write_text_atomic
from ..latency import check_threads
from ..metrics import DEFAULT_METRICS, parse_metrics
from ..privacy import KINDS as PRIVACY_KINDS
from ..privacy import scrub_texts
from ..retrievers.loading import default_loader
from ..silver import stemming_caution
from .assembly import (agreement_entry, evaluation_entry, scrub_note, setup_notes,
                       system_entry, versions)
from .bundle import FORMAT, AgreementInfo, CatalogueInfo, Evaluation, Results, Setup
from .deciding import checked_limits, evaluation_decision
from .outputs import write_json, write_tables
from .publish import clear_leftovers, publish, staged
from .searching import Notify, Searched, merge_runs, search_set
from .sets import JudgmentSet, LoadedSet, load_set
from .systems import System, clean_name, plan_systems, stemming

DEFAULT_DEPTH = 100
DEFAULT_RESAMPLES = 10000
WORST_QUERIES = 5
MISS_K = 10


@dataclass(frozen=True)
class EvalResult:
    """Where everything went, and the results the report was rendered from."""

    out_dir: Path
    report: Path
    results: Results
    seconds: float

    @property
    def bundle(self) -> dict[str, Any]:
        """The results as written to ``results.json``."""
        return self.results.as_dict()


@dataclass(frozen=True)
class _Plan:
    """The checked request, as every step needs it."""

    systems: list[System]
    baseline: str
    metrics: list[str]
    depth: int
    resamples: int
    seed: int
    alpha: float
    retime: bool
    threads: int | None
    quiet: bool
    scrub: bool
    say: Notify
    limits: Limits = Limits()

    @property
    def names(self) -> list[str]:
        return [s.name for s in self.systems]


def evaluate(catalogue: str | Path | Catalogue, sets: Sequence[JudgmentSet],
             encoders: Sequence[str], out_dir: str | Path, *, fuse: Sequence[str] = (),
             baseline: str | None = None, k: int | None = None,
             metrics: Sequence[str] = DEFAULT_METRICS, resamples: int = DEFAULT_RESAMPLES,
             seed: int = 0, alpha: float = 0.05, ann: str = "exact",
             cache_dir: str | Path | None = None, template: str | None = None,
             agreement: tuple[str, str] | None = None, title: str | None = None,
             scrub_queries: bool = False, retime: bool = False, threads: int | None = None,
             quiet: bool = False, notify: Notify | None = None,
             limits: Limits | None = None, engine: Engine | None = None) -> EvalResult:
    """Index, search (timed), fuse, score, compare, tabulate misses and write the report.

    ``encoders`` are specs (``NAME=SPEC`` to name one); ``fuse`` entries join system
    names with ``+``. The baseline defaults to the first system. ``k`` results are kept
    per query (None: DEFAULT_DEPTH, or every item of a smaller catalogue; more than the
    catalogue holds is refused, as ``trawl search`` refuses it). ``agreement`` names two
    judgment sets whose system rankings are compared. ``scrub_queries`` replaces personal
    data (``privacy.scrub``) in the query text the report and tables show; searches
    still use the original text. ``threads`` is the compute thread count searches are
    timed with (None: the libraries' defaults); time with what the deployment will have.
    A system whose index, queries, depth and thread count are unchanged since an earlier
    evaluation into the same folder keeps that run and its latency figures (the report
    says so); ``retime`` searches and times everything again. ``limits`` (latency, index
    size, accepted quality loss, headline metric) shape the decision (``decision.decide``).
    ``engine`` is where index builds embed (``engines``; default: this process).
    """
    started = time.perf_counter()
    # everything that can be wrong with the request is checked before any work
    systems, baseline, metric_names = _check_request(
        encoders, fuse, baseline, metrics, k, resamples, threads, sets, agreement, ann)
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise UsageError(f"-o {out} exists and is not a folder")
    cat = catalogue if isinstance(catalogue, Catalogue) else load_catalogue(catalogue, template)
    loaded = [load_set(js) for js in sets]
    plan = _Plan(systems, baseline, metric_names, _depth(k, cat), resamples, seed, alpha,
                 retime, threads, quiet, scrub_queries, notify or (lambda _msg: None),
                 checked_limits(limits, metric_names[0]))
    check_writable(out, "output folder", folder=True)
    if any(s.spec is not None and not s.spec.lexical for s in systems):
        check_cache_dir(Path(cache_dir) if cache_dir is not None else default_cache_dir())
    clear_leftovers(out)
    indexes = _index_systems(plan, cat, out, ann,
                             Path(cache_dir) if cache_dir is not None else None, engine)
    with staged(out) as stage:  # published as a whole at the end (pipeline.publish)
        results = _evaluate_into(plan, cat, loaded, indexes, out, stage, agreement, k, ann,
                                 title)
        report = out / "report.html"
        publish(stage, out)
    return EvalResult(out, report, results, time.perf_counter() - started)


def _evaluate_into(plan: _Plan, cat: Catalogue, loaded: Sequence[LoadedSet],
                   indexes: Mapping[str, Any], out: Path, stage: Path,
                   agreement: tuple[str, str] | None, k: int, ann: str,
                   title: str | None) -> Results:
    """Search every set (runs go to ``out``), score and tabulate, and write the tables,
    results.json and report.html into ``stage``."""
    systems, metric_names, resamples, seed, alpha = (plan.systems, plan.metrics,
                                                     plan.resamples, plan.seed, plan.alpha)
    scrub_queries = plan.scrub
    scrubbed = dict.fromkeys(PRIVACY_KINDS, 0)
    evaluations: list[Evaluation] = []
    searched: dict[str, Searched] = {}
    for ld in loaded:
        searched[ld.spec.name], entry = _evaluate_set(plan, ld, cat, indexes, out, scrubbed,
                                                      stage)
        evaluations.append(entry)
    agreed = _agreement(plan, agreement, loaded, searched, stage) if agreement else None
    notes = setup_notes(systems, k, plan.depth, ann, cat, list(searched.values()))
    notes["privacy"] = scrub_note(scrubbed) if scrub_queries else (
        "query text shown as given in the report and tables, not scrubbed of personal data")
    results = Results(
        FORMAT, title or f"Search evaluation of {Path(cat.path).name}", __version__,
        Setup(CatalogueInfo(cat.path, cat.fingerprint, len(cat), cat.type_counts()),
              tuple(metric_names), metric_names[0], plan.depth, resamples, seed, alpha, notes,
              versions(), scrubbed if scrub_queries else None),
        tuple(system_entry(s, indexes, cat) for s in systems),
        tuple(_judged_by(ev, agreed) for ev in evaluations), agreed,
        evaluation_decision(systems, loaded, searched, indexes, plan.limits, resamples, seed,
                            alpha))
    bundle = results.as_dict()
    write_json(stage / "results.json", bundle)
    from ..report.html import render_html

    write_text_atomic(stage / "report.html", render_html(bundle))
    return results


def _depth(k: int | None, cat: Catalogue) -> int:
    """Results kept per query: ``k``, or DEFAULT_DEPTH capped at the catalogue's size;
    more than the catalogue holds is refused, as ``trawl search`` refuses it."""
    from ..index.search import check_depth

    if k is None:
        return min(DEFAULT_DEPTH, len(cat))
    check_depth(k, len(cat), f"catalogue {cat.path}")
    return k


def _check_request(encoders: Sequence[str], fuse: Sequence[str], baseline: str | None,
                   metrics: Sequence[str], k: int | None, resamples: int,
                   threads: int | None, sets: Sequence[JudgmentSet],
                   agreement: tuple[str, str] | None, ann: str
                   ) -> tuple[list[System], str, list[str]]:
    """The systems, baseline and metric names of a request, or the first thing wrong."""
    from ..index import check_store

    systems = plan_systems(encoders, fuse)
    for system in systems:
        if system.spec is not None:
            check_store(system.spec, ann, system.store)
    names = [s.name for s in systems]
    baseline = baseline or names[0]
    if baseline not in names:
        raise UsageError(f"--baseline {baseline!r} is not one of the systems: {', '.join(names)}")
    metric_names = [m.name for m in parse_metrics(metrics)]
    if k is not None and k < 1:
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
    return systems, baseline, metric_names


def _index_systems(plan: _Plan, cat: Catalogue, out: Path, ann: str,
                   cache: Path | None, engine: Engine | None) -> dict[str, Any]:
    """Every encoder system's index in ``out/indexes/NAME``, reused when it still matches."""
    from .reuse import open_or_build

    loader = default_loader()
    indexes: dict[str, Any] = {}
    for s in plan.systems:
        if s.spec is None:
            continue
        plan.say(f"index {s.name} ({len(cat)} items)")
        indexes[s.name], reused = open_or_build(cat, s.spec, out / "indexes" / s.name, ann,
                                                cache, plan.quiet, loader, s.store, engine)
        if reused:
            plan.say(f"  reused {out / 'indexes' / s.name}")
    return indexes


def _evaluate_set(plan: _Plan, ld: LoadedSet, cat: Catalogue, indexes: Mapping[str, Any],
                  out: Path, scrubbed: dict[str, int], stage: Path
                  ) -> tuple[Searched, Evaluation]:
    """Search, score, compare and tabulate misses for one judgment set; write its runs
    into ``out`` and its tables into ``stage``. ``scrubbed`` counts what was scrubbed
    from the query text shown."""
    from ..compare import compare_scores
    from ..misses import miss_table
    from ..scores import score_runs

    js = ld.spec
    folder = out / js.name
    found = search_set(plan.systems, indexes, ld.queries, folder / "runs", plan.depth,
                       plan.retime, plan.quiet, plan.say, js.name, plan.threads)
    runs = found.runs
    ordered = [runs[plan.baseline]] + [runs[n] for n in plan.names if n != plan.baseline]
    plan.say(f"score {js.name}: {len(ld.qrels)} queries, {plan.resamples} bootstrap resamples")
    scores = score_runs(ld.qrels, ordered, plan.metrics, cat, plan.resamples, plan.seed,
                        plan.alpha)
    comparison = compare_scores(scores, plan.resamples, plan.seed, alpha=plan.alpha) \
        if len(ordered) > 1 else None
    shown = ld.queries
    if plan.scrub:
        shown, counts = scrub_texts(ld.queries)
        for kind, n in counts.items():
            scrubbed[kind] += n
    misses = [miss_table(ld.qrels, runs[n], cat, min(MISS_K, plan.depth), WORST_QUERIES,
                         shown) for n in plan.names]
    write_tables(stage / js.name, scores, comparison, misses)
    entry = evaluation_entry(ld, plan.names, plan.baseline, found.latency, scores,
                             comparison, misses)
    extra = _truncation_warnings(plan.systems, cat, ld.queries)
    if ld.silver and (caution := stemming_caution(stemming(plan.systems))):
        extra += (caution,)
    return found, (replace(entry, warnings=entry.warnings + extra) if extra else entry)


def _truncation_warnings(systems: Sequence[System], cat: Catalogue,
                         queries: Mapping[str, str]) -> tuple[str, ...]:
    """Per dense system, the items and queries longer than its encoder's window."""
    from ..window import count_truncated

    out = []
    texts = [cat.template.render(it) for it in cat.items]
    for s in systems:
        if s.spec is None or s.spec.lexical:
            continue
        for what, found in (("items", count_truncated(texts, s.spec, s.spec.document_prefix)),
                            ("queries", count_truncated(list(queries.values()), s.spec,
                                                        s.spec.query_prefix))):
            if found is not None and found.over:
                out.append(f"{s.name}: {found.describe(what)}")
    return tuple(out)


def _agreement(plan: _Plan, pair: tuple[str, str], loaded: Sequence[LoadedSet],
               searched: Mapping[str, Searched], out: Path) -> AgreementInfo:
    """How alike the two named sets rank the systems; also written as agreement.json."""
    from ..agreement import agree

    a, b = pair
    plan.say(f"agreement: {a} vs {b}")
    merged = [merge_runs(n, [searched[a].runs[n], searched[b].runs[n]]) for n in plan.names]
    qrels = {ld.spec.name: ld.qrels for ld in loaded}
    ag = agree(qrels[a], qrels[b], merged, metric=plan.metrics[0], resamples=plan.resamples,
               seed=plan.seed, confidence=1 - plan.alpha).as_dict()
    write_json(out / "agreement.json", ag)
    labels = {ld.spec.name: ld.spec.label or ld.spec.name for ld in loaded}
    return agreement_entry(a, b, labels, ag)


def _judged_by(ev: Evaluation, agreed: AgreementInfo | None) -> Evaluation:
    """``ev`` with the line saying who judged it: for silver, that the figures are
    estimates, with the agreement measured against the other set when there is one."""
    from ..agreement import seen_from
    from ..silver import MeasuredAgreement, silver_note

    if ev.origin == "unknown":
        return replace(ev, judged_by="judgments of unknown origin: not declared human, no "
                                     "synthesis provenance found")
    if not ev.silver:
        return replace(ev, judged_by="human judgments")
    if agreed is None or ev.name not in (agreed.a, agreed.b):
        return replace(ev, judged_by=silver_note())
    mine = ev.name == agreed.a
    other = agreed.b_label if mine else agreed.a_label
    tau, firm = agreed.tau, agreed.firm_pairs
    settled, swapped = (None, None) if firm is None else \
        seen_from(asdict(firm), "a" if mine else "b")
    return replace(ev, judged_by=silver_note(
        measured=MeasuredAgreement(other, tau.value, tau.low, tau.high, settled, swapped)))
