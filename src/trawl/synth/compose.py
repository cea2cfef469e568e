"""Compose the styles into a silver set: queries, graded judgments, provenance, summary.

For every sampled item and query slot a style is drawn from the mix, the style offers
candidate wordings, a target overlap is drawn from the overlap profile and the closest
candidate is kept. Queries that copy too much of the item (above the profile's ceiling)
are dropped, near-duplicates across items are merged (every source judged), and an
optional round-trip check drops queries whose source the checker cannot find.
Randomness is seeded per (seed, item, slot), so an item's queries do not depend on which
other items were sampled.
"""

from __future__ import annotations

import random
from collections import Counter
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from ..catalogue import Catalogue, Item
from ..errors import UsageError
from ..judgments import Qrels
from ..progress import progress
from .calibrate import calibrate_profile
from .corpus import Corpus, build_corpus
from .filters import round_trip_keep
from .grading import (RELATED_GRADE, SOURCE_GRADE, Draft, Merged, merge_near_duplicates,
                      silver_qrels)
from .keyword import keyword_query, title_phrase
from .lexicon import EMPTY, Lexicon
from .llm import LlmClient
from .neighbours import NEIGHBOUR_SPECS, consensus_neighbours
from .neighbours import neighbour_depth as default_neighbour_depth
from .overlap import OverlapProfile, overlap
from .paraphrase import Rewording, drop_rarest, paraphrases
from .question import question_query
from .text import words
from .typo import DEFAULT_RATE, add_typos, misspell
from .wordnet import WordNet, load_wordnet

STYLES = ("keyword", "question", "paraphrase", "typo", "llm")
NEEDS_WORDNET = ("paraphrase",)
# Paraphrase alone agreed best with human judgments in bench/silver_agreement.py on both
# collections measured (see DEVELOPERS.md, "How good is silver?"); keyword, question and
# typo queries moved the ranking towards exact-word matching there, so they are opt-in.
DEFAULT_MIX = {"paraphrase": 1.0}
FALLBACK_MIX = {"question": 1.0, "keyword": 1.0}  # default when paraphrasing is impossible
CANDIDATES = 3  # draws per slot for the styles that do not vary their wording themselves

# Default overlap profile: targets spread evenly over 0..0.6, dropping queries above 0.75.
# Real people's queries reuse well under all of an item's words (during development the
# share of human query words found in the judged item averaged 0.19 to 0.68 on four
# collections, by different measures). With sense-checked swaps and the rarest words
# left out, bench/silver_agreement.py ranked systems closer to human judgments with a
# ceiling of 0.75 than with 0.6 (too few queries survive) or none (exact-word matching
# wins). Calibrate from real queries when you have some (calibrate.py).
DEFAULT_PROFILE = OverlapProfile(tuple(0.06 * k for k in range(11)), 0.75, "default")


@dataclass(frozen=True)
class Tools:
    """What the styles draw on, loaded once per run."""

    corpus: Corpus
    rewording: Rewording
    typo_rate: float = DEFAULT_RATE
    llm: LlmClient | None = None


def _keyword(item: Item, tools: Tools, rng: random.Random) -> list[str]:
    return [keyword_query(item, tools.corpus, rng) for _ in range(CANDIDATES)]


def _question(item: Item, tools: Tools, rng: random.Random) -> list[str]:
    return [question_query(item, tools.corpus, rng) for _ in range(CANDIDATES)]


def _can_reword(tools: Tools) -> bool:
    return tools.rewording.wordnet is not None or bool(tools.rewording.lexicon.entries)


def _base(item: Item, tools: Tools, rng: random.Random) -> str:
    """What paraphrase and typo start from: the title's words (see ``title_phrase``)."""
    return " ".join(title_phrase(item, tools.corpus, rng))


def _paraphrase(item: Item, tools: Tools, rng: random.Random) -> list[str]:
    base = _base(item, tools, rng)
    stems = tools.corpus.words[item.id].stems
    out = paraphrases(base, tools.rewording, rng) or [base]
    return [drop_rarest(q, stems, tools.corpus.idf) for q in out]


def _typo(item: Item, tools: Tools, rng: random.Random) -> list[str]:
    """A keyword or question query (paraphrased when WordNet or a lexicon is there) with
    at least one misspelt word, the rest at the typo rate."""
    cands = _paraphrase(item, tools, rng) if _can_reword(tools) else [_base(item, tools, rng)]
    out = []
    for q in cands:
        toks = q.split()
        long = [k for k, w in enumerate(toks) if len(w) >= 4 and w.isalpha()]
        if not long:
            continue
        k = rng.choice(long)
        toks[k] = misspell(toks[k], rng)[0]
        rest = add_typos(" ".join(toks[:k] + toks[k + 1:]), rng, tools.typo_rate).split()
        out.append(" ".join(rest[:k] + [toks[k]] + rest[k:]))
    return out


def _llm(item: Item, tools: Tools, rng: random.Random) -> list[str]:
    assert tools.llm is not None
    return tools.llm.queries_for(item, rng)


STYLE_MAKERS: Mapping[str, Callable[[Item, Tools, random.Random], list[str]]] = {
    "keyword": _keyword, "question": _question, "paraphrase": _paraphrase, "typo": _typo,
    "llm": _llm,
}
GENERATORS = {"keyword": "tfidf-terms", "question": "type-templates",
              "paraphrase": "wordnet+lexicon", "typo": "damerau-keyboard", "llm": "chat"}


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


def parse_mix(styles: str | Mapping[str, float] | Sequence[str] | None) -> dict[str, float]:
    """Style weights from 'keyword,paraphrase:3' (weight 1 when omitted), a list or a dict."""
    if styles is None:
        return dict(DEFAULT_MIX)
    if isinstance(styles, Mapping):
        pairs = list(styles.items())
    else:
        parts = styles.split(",") if isinstance(styles, str) else list(styles)
        pairs = []
        for p in (x.strip() for x in parts):
            if not p:
                continue
            name, _, w = p.partition(":")
            try:
                weight = float(w) if w else 1.0
            except ValueError:
                raise UsageError(f"style weight {w!r} in {p!r} is not a number; "
                                 "write e.g. 'paraphrase:3'") from None
            pairs.append((name.strip(), weight))
    mix: dict[str, float] = {}
    for name, weight in pairs:
        if name not in STYLES:
            raise UsageError(f"unknown query style {name!r}; choose from {', '.join(STYLES)}")
        if weight < 0:
            raise UsageError(f"style weight for {name!r} is {weight}; weights must be >= 0")
        mix[name] = mix.get(name, 0.0) + float(weight)
    mix = {k: v for k, v in mix.items() if v > 0}
    if not mix:
        raise UsageError("no query style with a positive weight; e.g. --styles keyword,paraphrase")
    return mix


def sample_items(catalogue: Catalogue, sample: int | None, seed: int) -> list[Item]:
    """All items, or ``sample`` of them stratified by destination type (largest-remainder
    allocation proportional to type size, at least one per type while there is room);
    catalogue order is kept."""
    if sample is None or sample >= len(catalogue):
        return list(catalogue.items)
    if sample < 1:
        raise UsageError(f"sample={sample} must be >= 1")
    by_type: dict[str, list[Item]] = {}
    for it in catalogue.items:
        by_type.setdefault(it.type, []).append(it)
    types = sorted(by_type)
    share = {t: sample * len(by_type[t]) / len(catalogue) for t in types}
    alloc = {t: int(share[t]) for t in types}
    if sample >= len(types):
        for t in types:
            alloc[t] = max(alloc[t], 1)
    spare = sample - sum(alloc.values())
    for t in sorted(types, key=lambda t: (-(share[t] - int(share[t])), t)):
        if spare <= 0:
            break
        if alloc[t] < len(by_type[t]):
            alloc[t] += 1
            spare -= 1
    while sum(alloc.values()) > sample:  # more types than the sample: drop the smallest
        t = min((t for t in types if alloc[t]), key=lambda t: (share[t], t))
        alloc[t] -= 1
    chosen: set[str] = set()
    for t in types:
        rng = random.Random(f"{seed}:sample:{t}")
        chosen.update(it.id for it in rng.sample(by_type[t], alloc[t]))
    return [it for it in catalogue.items if it.id in chosen]


def synthesise(catalogue: Catalogue, *, per_item: int = 1, sample: int | None = None,
               styles: str | Mapping[str, float] | Sequence[str] | None = None, seed: int = 0,
               profile: OverlapProfile | None = None,
               calibrate_with: Mapping[str, str] | None = None, calibration_source: str = "",
               max_overlap: float | None = None, check_with: Sequence[str] = (),
               check_depth: int = 20, lexicon: Lexicon | None = None,
               wordnet: WordNet | None | str = "auto", llm: LlmClient | None = None,
               typo_rate: float = DEFAULT_RATE, source_grade: int = SOURCE_GRADE,
               related_grade: int = RELATED_GRADE,
               neighbours: Sequence[str] = NEIGHBOUR_SPECS,
               neighbour_depth: int | None = None, cache_dir: str | Path | None = None,
               qid_prefix: str = "syn", quiet: bool = False) -> SilverSet:
    """Synthesise ``per_item`` queries for each (sampled) item, with silver judgments.

    ``styles`` is a mix such as ``"keyword,paraphrase:3"``. The overlap profile is
    ``profile``, else one calibrated on ``calibrate_with`` (real unjudged queries), else
    ``DEFAULT_PROFILE``; ``max_overlap`` overrides its ceiling. ``wordnet="auto"`` loads
    WordNet from the usual folders; when it is missing, the styles that need it are
    skipped (listed in ``skipped_styles``). ``check_with`` names encoder specs whose
    fused top ``check_depth`` must contain a query's source for it to be kept.
    Items every encoder in ``neighbours`` places among a source's ``neighbour_depth``
    nearest (default: 10, fewer in catalogues under 380 items) are judged at
    ``related_grade`` too (see neighbours.py; ``()`` turns it off).
    ``cache_dir`` is the embedding cache those encoders use.
    """
    mix = parse_mix(styles)
    default_mix = styles is None
    if per_item < 1:
        raise UsageError(f"per_item={per_item} must be >= 1")
    if not 0 <= typo_rate <= 1:
        raise UsageError(f"typo rate {typo_rate} must be between 0 and 1")
    if related_grade < 0 or source_grade < 1 or related_grade >= source_grade:
        raise UsageError(f"grades must satisfy 0 <= related ({related_grade}) < source "
                         f"({source_grade})")
    if "llm" in mix and llm is None:
        raise UsageError("style 'llm' needs a chat-completions server: give --llm-url and "
                         "--llm-model, or drop 'llm' from --styles")
    if profile is not None and calibrate_with is not None:
        raise UsageError("give either an overlap profile or queries to calibrate one, not both")
    if max_overlap is not None and not 0 < max_overlap <= 1:
        raise UsageError(f"max overlap {max_overlap} must be in (0, 1]")
    if neighbour_depth is None:
        neighbour_depth = default_neighbour_depth(len(catalogue))
    if neighbours and neighbour_depth < 1:
        raise UsageError(f"neighbour depth {neighbour_depth} must be >= 1")
    if check_with and check_depth < 1:
        raise UsageError(f"check depth {check_depth} must be >= 1")
    if len(catalogue) == 0:
        raise UsageError(f"{catalogue.path}: catalogue has no items")
    lexicon = lexicon or EMPTY
    skipped: dict[str, str] = {}
    if wordnet == "auto":
        wordnet = load_wordnet() if any(s in mix for s in NEEDS_WORDNET + ("typo",)) else None
    if wordnet is None and not lexicon.entries:
        for s in NEEDS_WORDNET:
            if s in mix:
                skipped[s] = ("WordNet not found (install Debian's wordnet-base) and no "
                              "--lexicon given")
                del mix[s]
        if not mix and default_mix:
            mix = dict(FALLBACK_MIX)
        if not mix:
            raise UsageError("every requested style was skipped: "
                             + "; ".join(f"{k}: {v}" for k, v in skipped.items()))
    corpus = build_corpus(catalogue, wordnet)
    if not any(w.stems for w in corpus.words.values()):
        raise UsageError(f"{catalogue.path}: no item has any words to make queries from "
                         "(titles and texts are empty or stop words only)")
    if profile is None:
        profile = (calibrate_profile(catalogue, calibrate_with, calibration_source, quiet=quiet)
                   if calibrate_with is not None else DEFAULT_PROFILE)
    if max_overlap is not None:
        profile = replace(profile, ceiling=max_overlap)
    tools = Tools(corpus, Rewording(wordnet, lexicon, phrases=corpus.phrases,
                                   known=corpus.known, names=corpus.names), typo_rate, llm)
    items = sample_items(catalogue, sample, seed)
    names, weights = list(mix), [mix[k] for k in mix]

    drafts: list[Draft] = []
    targets: list[float] = []
    dropped: Counter[tuple[str, str, str]] = Counter()  # (style, type, reason)
    with progress(len(items) * per_item, "synthesising queries", quiet, unit="query") as bar:
        for it in items:
            stems = corpus.words[it.id].stems
            for slot in range(per_item):
                rng = random.Random(f"{seed}:{it.id}:{slot}")
                style = rng.choices(names, weights)[0]
                bar.update(1)
                if not stems:
                    dropped[(style, it.type, "item has no words")] += 1
                    continue
                target = profile.sample(rng)
                cands = [" ".join(c.split()) for c in STYLE_MAKERS[style](it, tools, rng)]
                scored = [(c, o) for c in cands if c and (o := overlap(c, stems)) is not None]
                if not scored:
                    dropped[(style, it.type, "no candidate")] += 1
                    continue
                text, ov = min(scored, key=lambda p: abs(p[1] - target))
                if ov > profile.ceiling + 1e-9:
                    dropped[(style, it.type, "overlap above ceiling")] += 1
                    continue
                drafts.append(Draft(text, it.id, style, GENERATORS[style], round(ov, 4)))
                targets.append(round(target, 4))
    target_of = {id(d): t for d, t in zip(drafts, targets)}
    merged = merge_near_duplicates(drafts)
    if check_with:
        keep = round_trip_keep(catalogue, merged, check_with, check_depth, quiet=quiet,
                               cache_dir=cache_dir)
        for m, ok in zip(merged, keep):
            if not ok:
                d = m.drafts[0]
                dropped[(d.style, catalogue.by_id[d.source].type, "round-trip check")] += 1
        merged = [m for m, ok in zip(merged, keep) if ok]
    width = max(4, len(str(len(merged))))
    final = {f"{qid_prefix}{k:0{width}d}": m for k, m in enumerate(merged, start=1)}
    without = silver_qrels(final, catalogue, source_grade, related_grade)
    qrels, near = without, {}
    if neighbours and related_grade > 0:
        near = consensus_neighbours(catalogue, {s for m in final.values() for s in m.sources},
                                    neighbours, neighbour_depth, cache_dir, quiet)
        qrels = silver_qrels(final, catalogue, source_grade, related_grade, near)
    provenance = tuple(_provenance(qid, m, catalogue, seed, target_of[id(m.drafts[0])])
                       for qid, m in final.items())
    summary = _summary(final, catalogue, dropped, profile, len(items), per_item, mix)
    summary["neighbours"] = {"encoders": list(neighbours) if near else [],
                             "depth": neighbour_depth,
                             "judgments_added": sum(len(qrels[q]) - len(without[q])
                                                    for q in qrels)}
    return SilverSet({q: m.text for q, m in final.items()}, qrels, provenance, summary,
                     skipped)


def _provenance(qid: str, m: Merged, catalogue: Catalogue, seed: int, target: float
                ) -> dict[str, Any]:
    d = m.drafts[0]
    return {"qid": qid, "text": m.text, "source": d.source,
            "type": catalogue.by_id[d.source].type, "style": d.style,
            "generator": d.generator, "seed": seed, "overlap": d.overlap,
            "target_overlap": target, "sources": list(m.sources),
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
            "profile": profile.as_dict(), "rows": rows}
