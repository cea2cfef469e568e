"""Compose the styles into a silver set: queries, graded judgments, provenance, summary.

For every sampled item and query slot a style is drawn from the mix, the style offers
candidate wordings, a target overlap is drawn from the overlap profile and the closest
candidate is kept (a later slot only takes a new wording; see ``_draft_one``).
Queries of more than FREE_WORDS content words that copy too much of the item (above the
profile's ceiling) are dropped, near-duplicates across items are merged (every source judged), and an
optional round-trip check drops queries whose source the checker cannot find.
Randomness is seeded per (seed, item, slot), so an item's queries do not depend on which
other items were sampled.
"""

from __future__ import annotations

import random
from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from ..catalogue import Catalogue, Item
from ..errors import UsageError
from ..judgments import Qrels
from ..progress import progress
from ..sampling import stratified_sample
from .calibrate import calibrate_profile
from .corpus import build_corpus
from .filters import round_trip_keep
from .grading import Draft, Merged, merge_near_duplicates, near_duplicate, query_key, silver_qrels
from .lexicon import EMPTY, Lexicon
from .llm import LlmClient
from .neighbours import consensus_neighbours, neighbour_depth
from .overlap import OverlapProfile, overlap
from .paraphrase import Rewording
from .settings import FALLBACK_MIX, STYLES, SynthSettings, parse_mix
from .styles import GENERATORS, NEEDS_WORDNET, STYLE_MAKERS, Tools
from .text import content_words, words
from .wordnet import WordNet, load_wordnet

__all__ = ["DEFAULT_PROFILE", "STYLES", "SilverSet", "SynthSettings", "coverage",
           "sample_items", "synthesise"]

# Default overlap profile: targets spread evenly over 0..0.6, dropping queries above 0.75.
# Real people's queries reuse well under all of an item's words (during development the
# share of human query words found in the judged item averaged 0.19 to 0.68 on four
# collections, by different measures). With sense-checked swaps and the rarest words
# left out, bench/silver_agreement.py ranked systems closer to human judgments with a
# ceiling of 0.75 than with 0.6 (too few queries survive) or none (exact-word matching
# wins on long titles). Calibrate from real queries when you have some (calibrate.py).
DEFAULT_PROFILE = OverlapProfile(tuple(0.06 * k for k in range(11)), 0.75, "default")
# The ceiling binds queries of more content words than this. A short query of an item's
# own words cannot single the item out by exact words the way a copied long title can
# (most typed queries are 1-3 words; common practice, no source): with the ceiling on
# every query, 90% of the slots of short-titled app catalogues were dropped, and without
# it on long queries bm25 won Cranfield's copied titles (bench/results/
# 2026-12-02-silver-shapes.md, runs R1 and R5).
FREE_WORDS = 3
# Above this many items the default is a stratified sample of this many: every type keeps
# its share, and the queries (one or more per item) stay enough to rank systems.
LARGE_CATALOGUE = 5000


@dataclass(frozen=True)
class SilverSet:
    """A synthesised query set with its silver judgments (estimates, not human labels)."""

    queries: Mapping[str, str]
    qrels: Qrels
    provenance: tuple[dict[str, Any], ...]
    summary: dict[str, Any]
    skipped_styles: Mapping[str, str] = field(default_factory=dict)

    def as_dict(self) -> dict[str, Any]:
        return {"queries": dict(self.queries), "qrels": self.qrels,
                "provenance": list(self.provenance), "summary": self.summary,
                "skipped_styles": dict(self.skipped_styles)}


def sample_items(catalogue: Catalogue, sample: int | None, seed: int) -> list[Item]:
    """``sample`` items stratified by destination type (``sampling``); by default all
    of them, or LARGE_CATALOGUE in a larger catalogue."""
    if sample is None and len(catalogue) > LARGE_CATALOGUE:
        sample = LARGE_CATALOGUE
    return stratified_sample(catalogue.items, lambda it: it.type, sample, seed)


def coverage(items: Sequence[Item], final: Mapping[str, Merged]) -> dict[str, float]:
    """Per destination type, the share of ``items`` that some query was made from."""
    sources = {s for m in final.values() for s in m.sources}
    counts: dict[str, list[int]] = {}
    for it in items:
        c = counts.setdefault(it.type, [0, 0])
        c[0] += it.id in sources
        c[1] += 1
    return {t: round(a / b, 4) for t, (a, b) in sorted(counts.items())}


def synthesise(catalogue: Catalogue, settings: SynthSettings = SynthSettings(), *,
               calibrate_with: Mapping[str, str] | None = None, calibration_source: str = "",
               lexicon: Lexicon | None = None, wordnet: WordNet | None | str = "auto",
               llm: LlmClient | None = None, cache_dir: str | Path | None = None,
               quiet: bool = False) -> SilverSet:
    """Synthesise ``settings.per_item`` queries for each (sampled) item, with silver
    judgments (see ``SynthSettings``).

    ``calibrate_with`` (real unjudged queries) calibrates the overlap profile when the
    settings give none. ``wordnet="auto"`` loads WordNet from the usual folders; when it
    is missing, the styles that need it are skipped (listed in ``skipped_styles``).
    ``cache_dir`` is the embedding cache of the neighbour and round-trip encoders.
    """
    settings.check()
    mix = parse_mix(settings.styles)
    if "llm" in mix and llm is None:
        raise UsageError("style 'llm' needs a chat-completions client (a server URL and a "
                         "model name); or leave 'llm' out of the style mix")
    if settings.profile is not None and calibrate_with is not None:
        raise UsageError("give either an overlap profile or queries to calibrate one, not both")
    if len(catalogue) == 0:
        raise UsageError(f"{catalogue.path}: catalogue has no items")
    lexicon = lexicon or EMPTY
    if wordnet == "auto":
        wordnet = load_wordnet() if any(s in mix for s in NEEDS_WORDNET + ("typo",)) else None
    mix, skipped = _usable_mix(mix, settings.styles is None, wordnet, lexicon)
    corpus = build_corpus(catalogue, wordnet)
    if not any(w.stems for w in corpus.words.values()):
        raise UsageError(f"{catalogue.path}: no item has any words to make queries from "
                         "(titles and texts are empty or stop words only)")
    profile = settings.profile or (
        calibrate_profile(catalogue, calibrate_with, calibration_source, quiet=quiet)
        if calibrate_with is not None else DEFAULT_PROFILE)
    if settings.max_overlap is not None:
        profile = replace(profile, ceiling=settings.max_overlap)
    items = sample_items(catalogue, settings.sample, settings.seed)
    tools = Tools(corpus, Rewording(wordnet, lexicon, phrases=corpus.phrases,
                                   known=corpus.known, names=corpus.names),
                  settings.typo_rate, llm)
    drafts, dropped = _draft(items, tools, mix, profile, settings, quiet)
    merged = merge_near_duplicates(drafts)
    if settings.check_with:
        merged = _round_trip(catalogue, merged, settings, dropped, cache_dir, quiet)
    width = max(4, len(str(len(merged))))
    final = {f"{settings.qid_prefix}{k:0{width}d}": m for k, m in enumerate(merged, start=1)}
    qrels, neighbours_summary = _judge(catalogue, final, settings, cache_dir, quiet)
    provenance = tuple(_provenance(qid, m, catalogue, settings.seed)
                       for qid, m in final.items())
    summary = _summary(final, catalogue, dropped, profile, len(items), settings.per_item, mix)
    summary["coverage"] = coverage(items, final)
    summary["neighbours"] = neighbours_summary
    return SilverSet({q: m.text for q, m in final.items()}, qrels, provenance, summary,
                     skipped)


def _usable_mix(mix: dict[str, float], default_mix: bool, wordnet: WordNet | None,
                lexicon: Lexicon) -> tuple[dict[str, float], dict[str, str]]:
    """The mix without the styles that cannot run here, and why each was skipped."""
    skipped: dict[str, str] = {}
    if wordnet is not None or lexicon.entries:
        return mix, skipped
    mix = dict(mix)
    for s in NEEDS_WORDNET:
        if s in mix:
            skipped[s] = "WordNet not found (install Debian's wordnet-base) and no lexicon given"
            del mix[s]
    if not mix and default_mix:
        mix = dict(FALLBACK_MIX)
    if not mix:
        raise UsageError("every requested style was skipped: "
                         + "; ".join(f"{k}: {v}" for k, v in skipped.items()))
    return mix, skipped


def _draft(items: list[Item], tools: Tools, mix: Mapping[str, float],
           profile: OverlapProfile, settings: SynthSettings, quiet: bool
           ) -> tuple[list[Draft], Counter[tuple[str, str, str]]]:
    """Up to ``per_item`` drafts per item; slots that yield none are counted by
    (style, type, reason)."""
    names, weights = list(mix), [mix[k] for k in mix]
    drafts: list[Draft] = []
    dropped: Counter[tuple[str, str, str]] = Counter()
    with progress(len(items) * settings.per_item, "synthesising queries", quiet,
                  unit="query") as bar:
        for it in items:
            seen: list[Draft] = []
            for slot in range(settings.per_item):
                rng = random.Random(f"{settings.seed}:{it.id}:{slot}")
                style = rng.choices(names, weights)[0]
                bar.update(1)
                draft, why = _draft_one(it, style, tools, profile, rng, seen)
                if draft is None:
                    dropped[(style, it.type, why)] += 1
                else:
                    drafts.append(draft)
                    seen.append(draft)
    return drafts, dropped


def _draft_one(it: Item, style: str, tools: Tools, profile: OverlapProfile,
               rng: random.Random, seen: list[Draft]) -> tuple[Draft | None, str]:
    """The candidate closest to a target overlap drawn from ``profile``, or None and why.

    A later slot of the item takes only a new wording (no near-duplicate of ``seen``, its
    earlier drafts) that copies no more of the item than they do: a second copy of the
    title would only repeat the first query, and one with more of the item's words would
    tilt the set towards exact-word matching."""
    stems = tools.corpus.words[it.id].stems
    if not stems:
        return None, "item has no words"
    target = profile.sample(rng)
    cands = [" ".join(c.split()) for c in STYLE_MAKERS[style](it, tools, rng)]
    scored = [(c, o) for c in cands if c and (o := overlap(c, stems)) is not None]
    if not scored:
        return None, "no candidate"
    if seen:
        most = min(d.overlap for d in seen)
        scored = [p for p in scored if p[1] <= most + 1e-9 and not any(
            near_duplicate(query_key(p[0]), query_key(d.text)) for d in seen)]
        if not scored:
            return None, "no new wording"
    text, ov = min(scored, key=lambda p: abs(p[1] - target))
    if ov > profile.ceiling + 1e-9 and len(content_words(text)) > FREE_WORDS:
        return None, "overlap above ceiling"
    return Draft(text, it.id, style, GENERATORS[style], round(ov, 4), round(target, 4)), ""


def _round_trip(catalogue: Catalogue, merged: list[Merged], settings: SynthSettings,
                dropped: Counter[tuple[str, str, str]], cache_dir: str | Path | None,
                quiet: bool) -> list[Merged]:
    keep = round_trip_keep(catalogue, merged, settings.check_with, settings.check_depth,
                           quiet=quiet, cache_dir=cache_dir)
    for m, ok in zip(merged, keep):
        if not ok:
            d = m.drafts[0]
            dropped[(d.style, catalogue.by_id[d.source].type, "round-trip check")] += 1
    return [m for m, ok in zip(merged, keep) if ok]


def _judge(catalogue: Catalogue, final: Mapping[str, Merged], settings: SynthSettings,
           cache_dir: str | Path | None, quiet: bool) -> tuple[Qrels, dict[str, Any]]:
    """Silver judgments, with consensus neighbours when enabled, and their summary."""
    depth = settings.neighbour_depth or neighbour_depth(len(catalogue))
    without = silver_qrels(final, catalogue, settings.source_grade, settings.related_grade)
    qrels, near = without, {}
    if settings.neighbours and settings.related_grade > 0:
        near = consensus_neighbours(catalogue, {s for m in final.values() for s in m.sources},
                                    settings.neighbours, depth, cache_dir, quiet)
        qrels = silver_qrels(final, catalogue, settings.source_grade, settings.related_grade,
                             near)
    added = sum(len(qrels[q]) - len(without[q]) for q in qrels)
    return qrels, {"encoders": list(settings.neighbours) if near else [], "depth": depth,
                   "judgments_added": added}


def _provenance(qid: str, m: Merged, catalogue: Catalogue, seed: int) -> dict[str, Any]:
    d = m.drafts[0]
    return {"qid": qid, "text": m.text, "source": d.source,
            "type": catalogue.by_id[d.source].type, "style": d.style,
            "generator": d.generator, "seed": seed, "overlap": d.overlap,
            "target_overlap": d.target, "sources": list(m.sources),
            "merged": len(m.drafts)}


def _summary(final: Mapping[str, Merged], catalogue: Catalogue,
             dropped: Counter[tuple[str, str, str]], profile: OverlapProfile, n_items: int,
             per_item: int, mix: Mapping[str, float]) -> dict[str, Any]:
    cells: dict[tuple[str, str], list[Merged]] = {}
    for m in final.values():
        d = m.drafts[0]
        cells.setdefault((d.style, catalogue.by_id[d.source].type), []).append(m)
    rows = []
    for (style, typ) in sorted(set(cells) | {(s, t) for s, t, _ in dropped}):
        ms = cells.get((style, typ), [])
        rows.append({
            "style": style, "type": typ, "queries": len(ms),
            "mean_words": round(sum(len(words(m.text)) for m in ms) / len(ms), 2) if ms else None,
            "mean_overlap": round(sum(m.drafts[0].overlap for m in ms) / len(ms), 3)
            if ms else None,
            "dropped": {r: n for (s, t, r), n in sorted(dropped.items())
                        if (s, t) == (style, typ)},
        })
    ovs = [m.drafts[0].overlap for m in final.values()]
    return {"items": n_items, "per_item": per_item, "styles": dict(mix),
            "queries": len(final), "merged_drafts": sum(len(m.drafts) - 1 for m in final.values()),
            "dropped": sum(dropped.values()),
            "mean_overlap": round(sum(ovs) / len(ovs), 3) if ovs else None,
            "profile": profile.as_dict(), "ceiling_above_words": FREE_WORDS, "rows": rows}
