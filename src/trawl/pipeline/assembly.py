"""The bundle's entries, made from the working objects of an evaluation: systems, one
entry per judgment set, the agreement between two sets, and the setup's notes."""

from __future__ import annotations

import platform
import typing
from collections.abc import Mapping, Sequence
from importlib import metadata
from typing import Any

from .. import __version__
from ..catalogue import Catalogue
from ..fusion import RRF_K
from ..latency import DEFAULT_WARMUP
from ..privacy import describe_counts
from .bundle import AgreementInfo, Evaluation, Latency, SystemInfo, from_json
from .searching import Searched
from .sets import LoadedSet
from .systems import System, quantised

VERSIONED_PACKAGES = ("numpy", "torch", "sentence-transformers", "onnxruntime", "faiss-cpu",
                      "bm25s", "model2vec", "scipy")
LATENCY_FIELDS = ("p50_ms", "p95_ms", "p99_ms", "mean_ms")


def system_entry(s: System, indexes: Mapping[str, Any], cat: Catalogue) -> SystemInfo:
    """What the bundle says about one system: spec, kind, size on disk."""
    if s.spec is None:
        size = sum(indexes[p].bytes for p in s.parts)
        return SystemInfo(s.name, f"rrf({', '.join(s.parts)}; k={RRF_K})", "fused", None, None,
                          size, round(size / len(cat), 1), quantised="parts")
    info = indexes[s.name].info
    dense = not s.spec.lexical
    return SystemInfo(s.name, str(s.spec), "lexical" if s.spec.lexical else s.spec.kind,
                      info.encoder_fingerprint, info.dim or None, info.bytes,
                      round(info.bytes / len(cat), 1), quantised=quantised(s),
                      store=info.store if dense else None,
                      vector_bytes=info.vector_bytes if dense else None)


def latency_entry(figures: Mapping[str, Any]) -> Latency:
    """The latency figures the bundle keeps from a run's sidecar."""
    loads = [x[0] for x in (figures.get("load_before"), figures.get("load_after")) if x]
    return Latency(*(figures.get(key) for key in LATENCY_FIELDS),
                   queries_per_s=figures.get("batch_queries_per_s"),
                   threads=figures.get("threads"), load=max(loads) if loads else None,
                   busy=figures.get("busy"))


def merged_warnings(scoring: Sequence[str], comparing: Sequence[str]) -> list[str]:
    """Scoring's and comparing's warnings, each said once: a group with too few queries
    for an interval is warned about by both ('type 'form': only 5 queries ...'); the
    comparison's warning says all the scoring one does, so the scoring one is dropped."""
    from ..stats import TOO_FEW

    def group(w: str) -> str:
        return w.split(" (fewer than", 1)[0]

    covered = {group(w) for w in comparing if TOO_FEW in w}
    kept = [w for w in scoring if not (TOO_FEW in w and group(w) in covered)]
    return list(dict.fromkeys(kept + list(comparing)))


def evaluation_entry(ld: LoadedSet, names: Sequence[str], baseline: str,
                     latency: Mapping[str, Mapping[str, Any]], scores, comparison,
                     misses) -> Evaluation:
    """Every figure of one judgment set; ``judged_by`` is filled in once the agreement
    between sets is known."""
    from ..destinations import TYPE_RULE, type_tally

    js = ld.spec
    warnings = merged_warnings(scores.warnings, comparison.warnings if comparison else ())
    base_misses = next(m for m in misses if m.run == baseline)
    tables = _typed(Evaluation, {
        "scores": scores.score_rows(),
        "comparison": [r.as_dict() for r in comparison.rows] if comparison else [],
        "misses": [{"run": m.run, "k": m.k, "rows": [r.as_dict() for r in m.rows]}
                   for m in misses],
        "worst": base_misses.as_dict()["worst"],
    })
    return Evaluation(
        name=js.name, label=js.label or js.name, silver=ld.silver, origin=ld.origin,
        how=ld.how,
        queries_file=str(js.queries), qrels_file=str(js.qrels), queries=len(ld.qrels),
        judgments=sum(len(v) for v in ld.qrels.values()), baseline=baseline,
        latency={n: latency_entry(latency[n]) for n in names},
        corrected=corrected_test(comparison), miss_headline=base_misses.headline,
        type_rule=(TYPE_RULE[0].upper() + TYPE_RULE[1:] + "; "
                   + type_tally(scores.types, len(ld.qrels)) + "."),
        warnings=tuple(warnings),
        judged_by="", **tables)


def _typed(cls: type, values: Mapping[str, Any]) -> dict[str, Any]:
    """Fields of ``cls`` given as the plain rows other modules make, read as typed values
    (a row that no longer fits the bundle's definition fails here, not in a reader)."""
    hints = typing.get_type_hints(cls)
    return {key: from_json(hints[key], value, cls.__name__, key) for key, value in values.items()}


def corrected_test(comparison) -> str:
    """Which test's p-values the Holm correction was applied to, in words."""
    if comparison is None:
        return ""
    rule = comparison.as_dict()["correction"]
    return "randomisation" if "randomisation" in rule else "bootstrap"


def agreement_entry(a: str, b: str, labels: Mapping[str, str],
                    ag: Mapping[str, Any]) -> AgreementInfo:
    """The bundle's view of ``agreement.agree``'s result for sets ``a`` and ``b``."""
    return AgreementInfo(a, b, labels[a], labels[b], ag["metric"], ag["shared_queries"],
                         ag["queries_a"], ag["queries_b"], **_typed(AgreementInfo, {
                             "tau": ag["kendall_tau_b"], "rho": ag["spearman_rho"],
                             "systems": ag["systems"], "flips": ag["flips"],
                             "firm_pairs": ag["firm_pairs"]}))


def scrub_note(counts: Mapping[str, int]) -> str:
    return f"scrubbed from query text in the report: {describe_counts(counts)}"


def setup_notes(systems: Sequence[System], k: int | None, depth: int, ann: str,
                cat: Catalogue, searched: Sequence[Searched]) -> dict[str, str]:
    """One sentence per aspect of how the evaluation was run, for the report (``k``: the
    results asked for, None for the default)."""
    notes = {"search": f"{'exact inner product' if ann == 'exact' else ann.upper()} "
                       f"(dense), top {depth} per query"}
    if k is None and depth == len(cat):
        notes["search"] += f" (every item: the catalogue has {len(cat)})"
    if any(s.spec is None for s in systems):
        notes["fusion"] = f"Reciprocal Rank Fusion, k={RRF_K}, of each part's top {depth}"
    cpu = next((f"{lat['cpu']}, {lat['threads']} thread(s)" for found in searched
                for lat in found.latency.values() if lat.get("cpu")), "")
    if cpu:
        notes["latency"] = (f"one query at a time (encode + search), {DEFAULT_WARMUP} "
                            f"warm-up queries excluded; {cpu}")
    reused = list(dict.fromkeys(n for found in searched for n in found.reused))
    if reused:
        notes["reused"] = (f"runs and latency of {', '.join(reused)} come from an earlier "
                           "evaluation with the same index, queries, depth and threads "
                           "(--retime measures again)")
    notes["text template"] = repr(cat.template.pattern)
    return notes


def versions() -> dict[str, str]:
    """Versions of trawl, Python and the libraries that shape the figures."""
    out = {"trawl": __version__, "python": platform.python_version()}
    for pkg in VERSIONED_PACKAGES:
        try:
            out[pkg] = metadata.version(pkg)
        except metadata.PackageNotFoundError:
            continue
    return out
