"""report.html: one self-contained file rendered from a results bundle.

No scripts, fonts, images or links that leave the file: a Content-Security-Policy meta
tag forbids any request, so the page opens offline and cannot phone home even if a
catalogue string slipped through escaping (it cannot: see ``markup``). Every chart is
inline SVG followed by a table holding the same figures, for screen readers, print and
copy-paste. The bundle format is described in ``trawl.report``.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import Any

from ..agreement import seen_from
from . import format as fmt
from .charts import (Bar, BarGroup, Look, Point, agreement_scatter, grouped_bars, look,
                     quality_latency)
from .markup import Markup, breakable, el, join
from .style import STYLE

CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:; form-action 'none'"
WORST_PER_TYPE = 3


def render_html(bundle: Mapping[str, Any]) -> str:
    """The whole report as one HTML string (deterministic: same bundle, same bytes)."""
    looks = {s["name"]: look(i) for i, s in enumerate(bundle["systems"])}
    evaluations = bundle["evaluations"]
    from .decision_html import decision_section

    sections = [_setup(bundle, looks)]
    for i, ev in enumerate(evaluations):
        sections.append(_evaluation(bundle, ev, i + 2, looks))
    if bundle.get("agreement"):
        sections.append(_agreement(bundle["agreement"], len(evaluations) + 2, looks))
    sections.append(_reading_guide(bundle, len(sections) + 1))
    title = bundle.get("title") or "Search evaluation"
    page = el("html", {"lang": "en"},
              el("head", None,
                 el("meta", {"charset": "utf-8"}),
                 el("meta", {"http_equiv": "Content-Security-Policy", "content": CSP}),
                 el("meta", {"name": "viewport", "content": "width=device-width, initial-scale=1"}),
                 el("meta", {"name": "generator", "content": f"trawl {bundle.get('trawl_version', '')}"}),
                 el("title", None, f"{title} · trawl report"),
                 el("style", None, Markup(STYLE))),
              el("body", None,
                 _masthead(bundle, title),
                 decision_section(bundle, looks),
                 _contents(bundle),
                 el("main", None, *sections),
                 el("footer", None, "Written by trawl ", bundle.get("trawl_version", ""),
                    ". This file makes no network requests and needs no other files.")))
    return "<!doctype html>\n" + page + "\n"


# --- page furniture -------------------------------------------------------------------------

def _slug(text: str) -> str:
    return re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-") or "x"


def _masthead(bundle: Mapping[str, Any], title: str) -> Markup:
    cat = bundle["setup"]["catalogue"]
    silver = [ev for ev in bundle["evaluations"] if ev.get("silver")]
    notice = el("p", {"class_": "notice", "role": "note"},
                el("strong", None, "Silver judgments are estimates. "),
                f"The figures under {', '.join(ev['label'] for ev in silver)} come from "
                "machine-made judgments, not people. ", _silver_trust(bundle)) if silver else None
    return el("header", {"class_": "masthead"},
              el("p", {"class_": "kicker"}, "trawl · search evaluation"),
              el("h1", None, title),
              el("p", {"class_": "lede"},
                 f"{cat['items']} items of {len(cat['types'])} destination types, "
                 f"{len(bundle['systems'])} systems, "
                 f"{len(bundle['evaluations'])} judgment set"
                 f"{'s' if len(bundle['evaluations']) != 1 else ''}. Catalogue fingerprint ",
                 el("code", None, cat["fingerprint"]), "."),
              notice)


def _silver_trust(bundle: Mapping[str, Any]) -> Markup | str:
    ag = bundle.get("agreement")
    if not ag:
        return ("How well they rank systems the way people would is not measured here; "
                "review a sample (trawl review) or add human judgments to find out.")
    tau, firm = ag["tau"], ag.get("firm_pairs")
    silver = {e["name"] for e in bundle["evaluations"] if e.get("silver")}
    me, other = ("b", "a") if ag["b"] in silver and ag["a"] not in silver else ("a", "b")
    theirs, swapped = seen_from(firm, me) if firm else (0, 0)
    settled = "" if not firm else (  # tau counts near ties; settled pairs are what to trust
        f" {ag[f'{me}_label'][:1].upper()}{ag[f'{me}_label'][1:]} swaps {swapped} of the "
        f"{theirs} pairs of systems that {ag[f'{other}_label']} settles (keeps in order in "
        f"at least {100 * firm['threshold']:.0f}% of bootstrap resamples); a pair you decide "
        "on is settled only by judging real queries (trawl review).")
    return join(f"Measured against {ag[f'{other}_label']}: Kendall's tau between the two sets' "
                f"system rankings is {fmt.num(tau['value'], 2)} (interval "
                f"{fmt.interval(tau['low'], tau['high'], 2)}) over {len(ag['systems'])} systems "
                "(1: same order, -1: reversed).", settled, " See ",
                el("a", {"href": "#agreement"}, "Agreement"), ".")


def _contents(bundle: Mapping[str, Any]) -> Markup:
    items = [el("li", None, el("a", {"href": "#setup"}, "Setup"))]
    if bundle.get("decision"):
        items.insert(0, el("li", None, el("a", {"href": "#decision"}, "Decision")))
    for ev in bundle["evaluations"]:
        items.append(el("li", None, el("a", {"href": f"#eval-{_slug(ev['name'])}"},
                                       "Results: ", ev["label"])))
    if bundle.get("agreement"):
        items.append(el("li", None, el("a", {"href": "#agreement"}, "Agreement")))
    items.append(el("li", None, el("a", {"href": "#reading"}, "How to read")))
    return el("nav", {"aria_label": "Contents"}, el("ol", None, *items))


def _section(anchor: str, number: int, title: str, *body) -> Markup:
    return el("section", {"id": anchor, "aria_labelledby": f"{anchor}-h"},
              el("h2", {"id": f"{anchor}-h"}, el("span", {"class_": "secno"}, f"{number}"),
                 title),
              *body)


def _table(header: Sequence[Any], rows: Sequence[Sequence[Any]], caption: str | None = None,
           numeric: Sequence[bool] | None = None, cls: str = "data") -> Markup:
    numeric = numeric or [i > 0 for i in range(len(header))]
    head = el("thead", None, el("tr", None, *(
        el("th", {"scope": "col", "class_": "num" if n else None}, breakable(h))
        for h, n in zip(header, numeric))))
    body_rows = []
    for r in rows:
        cells = []
        for i, c in enumerate(r):
            if i == 0:
                cells.append(el("th", {"scope": "row"}, c))
            elif isinstance(c, DataCell):
                cells.append(c)
            else:
                cells.append(el("td", {"class_": "num" if numeric[i] else None}, c))
        body_rows.append(el("tr", None, *cells))
    return el("div", {"class_": "table-wrap"},
              el("table", {"class_": cls},
                 el("caption", None, caption) if caption else None,
                 head, el("tbody", None, *body_rows)))


class DataCell(Markup):
    """A ready ``<td>`` that ``_table`` places as is."""


def _cell(text: str, key: str | None = None, cls: str = "num") -> DataCell:
    """A data cell; ``key`` (evaluation|system|metric|type) ties it to the JSON tables."""
    return DataCell(el("td", {"class_": cls, "data_cell": key}, text))


def _swatch(name: str, looks: Mapping[str, Look]) -> Markup:
    lk = looks.get(name)
    if lk is None:
        return join(name)
    return join(el("span", {"class_": f"swatch m-{lk.marker}", "style": f"--c:{lk.colour}",
                            "aria_hidden": "true"}), name)


def _figure(chart: Markup, caption: str, table: Markup) -> Markup:
    return el("figure", None, el("div", {"class_": "chart-wrap"}, chart),
              el("figcaption", None, caption), table)


# --- sections -------------------------------------------------------------------------------

def _setup(bundle: Mapping[str, Any], looks: Mapping[str, Look]) -> Markup:
    setup = bundle["setup"]
    cat = setup["catalogue"]
    total = max(cat["items"], 1)
    types = _table(["destination type", "items", "share"],
                   [[t, n, fmt.share(n / total)] for t, n in cat["types"].items()],
                   caption="Catalogue items per destination type")
    judg_rows = []
    for ev in bundle["evaluations"]:
        kind = _badge(ev, "silver · estimates", "human", "origin unknown")
        judg_rows.append([ev["label"], kind, ev["queries"], ev["judgments"],
                          el("span", {"class_": "how"}, ev.get("how", ""))])
    judgments = _table(["judgment set", "kind", "queries", "judgments", "how it was made"],
                       judg_rows, caption="Judgment sets",
                       numeric=[False, False, True, True, False])
    sys_rows = []
    for s in bundle["systems"]:
        # ids whole, specs broken only between their parts ("minilm-" "int8")
        sys_rows.append([_swatch(s["name"], looks),
                         el("code", {"class_": "parts"}, breakable(s.get("spec", ""))),
                         s.get("kind", ""),
                         el("code", {"class_": "whole"}, s["fingerprint"][:12])
                         if s.get("fingerprint") else fmt.MISSING,
                         s.get("dimensions") or fmt.MISSING, s.get("quantised", "none"),
                         s.get("store") or fmt.MISSING, fmt.size(s.get("vector_bytes")),
                         fmt.size(s.get("index_bytes")), fmt.size(s.get("bytes_per_item"))])
    systems = _table(["system", "spec", "kind", "fingerprint", "dimensions", "quantised",
                      "vectors kept as", "vector bytes", "index size", "per item"], sys_rows,
                     caption="Systems under test. A quantised model (minilm-int8) runs its "
                             "weights as int8 but stores fp32 vectors, so its index is as "
                             "large as minilm's; quantised vectors (.vectors-int8, "
                             ".vectors-binary) shrink the index, not the model.",
                     numeric=[False] * 4 + [True, False, False] + [True] * 3)
    settings = [("catalogue", el("code", None, cat["path"])),
                ("fingerprint", el("code", None, cat["fingerprint"])),
                ("metrics", ", ".join(setup["metrics"])),
                ("ranking depth", setup["depth"]),
                ("bootstrap resamples", setup["resamples"]),
                ("seed", setup["seed"]),
                ("significance level", f"{setup['alpha']:g} (Holm-corrected)")]
    settings += [(k, v) for k, v in setup.get("notes", {}).items()]
    versions = ", ".join(f"{k} {v}" for k, v in setup.get("versions", {}).items())
    settings.append(("versions", versions))
    dl = el("dl", {"class_": "settings"},
            *(join(el("dt", None, k), el("dd", None, v)) for k, v in settings))
    return _section("setup", 1, "Setup", dl, el("div", {"class_": "pair"}, types, judgments),
                    systems)


def _scores_of(ev: Mapping[str, Any], metric: str,
               type_: str | None) -> dict[str, Mapping[str, Any]]:
    return {s["run"]: s for s in ev["scores"] if s["metric"] == metric and s["type"] == type_}


def _badge(ev: Mapping[str, Any], silver: str, human: str, unknown: str) -> Markup:
    """Who judged a set: silver, declared human, or neither known (never called human)."""
    origin = ev.get("origin") or ("silver" if ev.get("silver") else "human")
    words = {"silver": silver, "human": human, "unknown": unknown}[origin]
    return el("span", {"class_": f"badge {origin}"}, words)


def _evaluation(bundle: Mapping[str, Any], ev: Mapping[str, Any], number: int,
                looks: Mapping[str, Look]) -> Markup:
    from .decision_html import comparison_block

    slug = _slug(ev["name"])
    anchor = f"eval-{slug}"
    primary = bundle["setup"]["primary"]
    badge = _badge(ev, "silver · estimates", "human judgments", "judgments of unknown origin")
    intro = el("p", {"class_": "intro"}, badge, " ", f"{ev['queries']} queries, "
               f"{ev['judgments']} judgments ({ev.get('how', '')}). Baseline for "
               "comparisons: ", el("strong", None, ev["baseline"]), ".")
    warnings = None
    if ev.get("warnings"):
        warnings = el("ul", {"class_": "warnings"},
                      *(el("li", None, w) for w in ev["warnings"]))
    parts = [intro, warnings,
             _quality_latency(bundle, ev, slug, primary, looks),
             _per_type(bundle, ev, slug, primary, looks),
             comparison_block(bundle, ev, slug, looks),
             _misses(ev, slug, looks),
             _worst(ev, slug)]
    title = f"Results: {ev['label']}" + (" (silver, estimates)" if ev.get("silver") else "")
    return _section(anchor, number, title, *parts)


def _quality_latency(bundle, ev, slug: str, primary: str, looks) -> Markup:
    scores = _scores_of(ev, primary, None)
    systems = {s["name"]: s for s in bundle["systems"]}
    points, rows = [], []
    for name in (s["name"] for s in bundle["systems"]):
        sc = scores.get(name)
        lat = ev["latency"].get(name, {})
        if sc is None:
            continue
        if lat.get("p50_ms") is not None and sc["mean"] is not None:
            points.append(Point(name, lat["p50_ms"], sc["mean"], _or(sc["low"], sc["mean"]),
                                _or(sc["high"], sc["mean"]), looks[name]))
        key = f"{ev['name']}|{name}|{primary}|all"
        rows.append([_swatch(name, looks), _cell(fmt.num(sc["mean"]), key),
                     _cell(fmt.interval_of(sc), key + "|interval"),
                     _cell(fmt.ms(lat.get("p50_ms"))), _cell(fmt.ms(lat.get("p95_ms"))),
                     _cell(fmt.ms(lat.get("p99_ms"))), _cell(fmt.num(lat.get("queries_per_s"), 0)),
                     _cell(fmt.size(systems.get(name, {}).get("index_bytes")))])
    estimate = " (silver: estimates)" if ev.get("silver") else ""
    title = f"{primary} against p50 query latency, {ev['label']}{estimate}"
    chart = (quality_latency(points, primary, f"chart-ql-{slug}", title) if points
             else el("p", None, "No latency figures to plot."))
    table = _table(["system", primary, "95% interval", "p50 ms", "p95 ms", "p99 ms",
                    "queries/s", "index size"], rows, caption=f"Figures behind the chart: {title}")
    notes = ev.get("latency_note") or ("Latency: one query at a time (encode + search), "
                                       "warm-up excluded.")
    busy = [lat.get("load") for lat in ev["latency"].values() if lat.get("busy")]
    if busy:
        notes += (f" Warning: the machine was busier than its cores while timing (load "
                  f"average up to {max(busy):.1f}); latency is inflated, compare systems "
                  "with each other rather than with a target.")
    return el("div", {"class_": "block", "id": f"quality-{slug}"},
              el("h3", None, "Quality and speed"),
              _figure(chart, f"Up is better, left is faster. Whiskers: 95% bootstrap interval "
                             f"of the mean over queries. {notes}", table))


def _or(v, default):
    return default if v is None else v


def _per_type(bundle, ev, slug: str, primary: str, looks) -> Markup:
    types = [t for t in bundle["setup"]["catalogue"]["types"]
             if any(s["type"] == t for s in ev["scores"])]
    names = [s["name"] for s in bundle["systems"]]
    groups, rows = [], []
    for t in types:
        scores = _scores_of(ev, primary, t)
        n = next((s["n"] for s in scores.values()), 0)
        bars = tuple(Bar(name, scores[name]["mean"], _or(scores[name]["low"], scores[name]["mean"]),
                         _or(scores[name]["high"], scores[name]["mean"]), looks[name])
                     for name in names if name in scores and scores[name]["mean"] is not None)
        groups.append(BarGroup(f"{t} (n={n})", bars))
        rows.append([t, n] + [_cell(fmt.num(scores[name]["mean"]) if name in scores
                                    else fmt.MISSING, f"{ev['name']}|{name}|{primary}|{t}")
                              for name in names])
    estimate = " (silver: estimates)" if ev.get("silver") else ""
    title = f"{primary} per destination type, {ev['label']}{estimate}"
    if not groups:
        return el("div", {"class_": "block", "id": f"types-{slug}"},
                  el("h3", None, "By destination type"),
                  el("p", None, "No per-type figures (no catalogue types matched the judged "
                                "items)."))
    chart = grouped_bars(groups, primary, f"chart-types-{slug}", title)
    table = _table(["destination type", "queries"] + names, rows,
                   caption=f"Figures behind the chart: {title}")
    how = ev.get("type_rule", "A query counts toward the type of its best-judged item.")
    return el("div", {"class_": "block", "id": f"types-{slug}"},
              el("h3", None, "By destination type"),
              _figure(chart, f"Bars: mean {primary}; whiskers: 95% bootstrap interval. {how}",
                      table))


def _misses(ev, slug: str, looks) -> Markup:
    blocks = []
    for m in ev["misses"]:
        k = m["k"]
        lost_types = sorted({t for r in m["rows"] for t in r["lost_to"]})
        rows = []
        for r in m["rows"]:
            cells = [r["type"], r["queries"],
                     _cell(fmt.share(r["hit_at_1"]), f"{ev['name']}|{m['run']}|hit@1|{r['type']}"),
                     _cell(fmt.share(r["hit_at_k"])), r["misses"],
                     fmt.num(r["median_rank"], 1) if r["median_rank"] is not None
                     else fmt.MISSING]
            for t in lost_types:
                v = r["lost_to"].get(t)
                cells.append(DataCell(el("td", {"class_": "num heat", "style": _heat(v)},
                                         fmt.share(v) if v else "")))
            rows.append(cells)
        header = ["wanted type", "queries", "hit@1", f"hit@{k}", f"missed top {k}",
                  "median first rank"] + [f"lost to {t}" for t in lost_types]
        blocks.append(el("div", {"class_": "miss"},
                         el("h4", None, _swatch(m["run"], looks)),
                         _table(header, rows, caption=f"{m['run']}: where queries of each type "
                                "go wrong (lost to: type of the rank-1 item when the wanted "
                                "item is not first)", cls="data compact")))
    return el("div", {"class_": "block", "id": f"misses-{slug}"},
              el("h3", None, "Misses by destination type"),
              el("p", {"class_": "legend"}, ev.get("miss_headline", "")),
              *blocks)


def _heat(v: float | None) -> str | None:
    """Cell shade by share, one hue plus the printed number (never colour alone)."""
    if not v:
        return None
    return f"background: rgba(213, 94, 0, {0.08 + 0.6 * min(v, 1.0):.2f})"


def _item(it: Mapping[str, Any] | None) -> Markup:
    if not it:
        return el("span", {"class_": "none"}, "nothing retrieved")
    return el("div", {"class_": "item"},
              el("span", {"class_": "type"}, it["type"]), " ",
              el("span", {"class_": "title"}, it["title"] or it["id"]), " ",
              el("code", None, it["id"]),
              el("p", {"class_": "snippet"}, it.get("snippet", "")) if it.get("snippet")
              else None)


def _worst(ev, slug: str) -> Markup:
    worst = ev.get("worst") or {}
    queries = worst.get("queries", [])
    by_type: dict[str, list[Mapping[str, Any]]] = {}
    for q in queries:
        by_type.setdefault(q["type"], []).append(q)
    blocks = []
    for t, qs in by_type.items():
        rows = []
        for q in qs[:WORST_PER_TYPE]:
            rank = q["rank"] if q["rank"] is not None else f"not in top {worst.get('depth', '')}"
            rows.append(el("tr", None,
                           el("th", {"scope": "row"}, el("q", None, q["query"]),
                              el("div", {"class_": "qid"}, q["qid"])),
                           el("td", None, _item(q["wanted"])),
                           el("td", {"class_": "num"}, rank),
                           el("td", None, _item(q["winner"]))))
        blocks.append(el("div", {"class_": "table-wrap"}, el("table", {"class_": "data worst"},
                         el("caption", None, f"{t}: worst queries"),
                         el("thead", None, el("tr", None,
                            el("th", {"scope": "col"}, "query"),
                            el("th", {"scope": "col"}, "wanted item"),
                            el("th", {"scope": "col", "class_": "num"}, "its rank"),
                            el("th", {"scope": "col"}, "what came first instead"))),
                         el("tbody", None, *rows))))
    run = worst.get("run", ev["baseline"])
    return el("div", {"class_": "block", "id": f"worst-{slug}"},
              el("h3", None, f"Worst queries per type ({run})"),
              el("p", {"class_": "legend"}, "Queries whose wanted item ranked lowest, with "
                 "the item that was ranked first instead."),
              *(blocks or [el("p", None, "No misses to show.")]))


def _agreement(ag: Mapping[str, Any], number: int, looks) -> Markup:
    points = [Point(s["run"], s["score_a"], s["score_b"], s["score_b"], s["score_b"],
                    looks.get(s["run"], look(0)))
              for s in ag["systems"]]
    a, b, metric = ag["a_label"], ag["b_label"], ag["metric"]
    title = f"{metric} of each system under {a} (x) and {b} (y)"
    chart = agreement_scatter(points, f"{metric}, {a}", f"{metric}, {b}", "chart-agreement",
                              title)
    rows = [[_swatch(s["run"], looks),
             _cell(fmt.num(s["score_a"]), f"agreement|{s['run']}|a"),
             _cell(fmt.num(s["rank_a"], 1)),
             _cell(fmt.num(s["score_b"]), f"agreement|{s['run']}|b"),
             _cell(fmt.num(s["rank_b"], 1))] for s in ag["systems"]]
    table = _table(["system", f"{metric}, {a}", "rank", f"{metric}, {b}", "rank"], rows,
                   caption=f"Figures behind the chart: {title}")
    tau, rho = ag["tau"], ag["rho"]
    summary = el("p", {"class_": "headline"},
                 "Kendall's tau ", el("strong", {"data_cell": "agreement|tau"},
                                      fmt.num(tau["value"], 2)),
                 f" (95% interval {fmt.interval(tau['low'], tau['high'], 2)}), Spearman's rho ",
                 el("strong", {"data_cell": "agreement|rho"}, fmt.num(rho["value"], 2)),
                 f" (95% interval {fmt.interval(rho['low'], rho['high'], 2)}), over "
                 f"{len(ag['systems'])} systems; {_shared(ag)}")
    flips = (el("ul", None, *(el("li", None, f"{f['first']} is ahead of {f['second']} under {a} "
                                  f"by {fmt.gap(f['diff_a'])}{fmt.held(f.get('held_a'))} but "
                                  f"behind under {b} by {fmt.gap(f['diff_b'])}"
                                  f"{fmt.held(f.get('held_b'))}") for f in ag["flips"]))
             if ag["flips"] else el("p", None, "No pair of systems changes order."))
    firm = fmt.settled(ag.get("firm_pairs"), a, b)
    if firm:
        flips = el("div", None, flips, el(
            "p", {"class_": "legend"}, firm + (" In N% of resamples: how often that set keeps "
                                               "the order when its queries are resampled."
                                               if ag["flips"] else "")))
    return _section("agreement", number, f"Agreement: {a} against {b}",
                    el("p", {"class_": "intro"}, "Do the two judgment sets rank the systems "
                       "alike? If they do, decisions made on the silver set would hold up "
                       "under human judgment."),
                    summary,
                    _figure(chart, "Points on the dashed line score the same under both sets.",
                            table),
                    el("h3", None, "Pairs that change order"), flips)


def _shared(ag: Mapping[str, Any]) -> str:
    """What the two sets' queries have in common, in words made from the counts."""
    if ag["shared"] == 0:
        return ("the two sets share no query: each system's score comes from each set's "
                "own queries, and the intervals resample each set's queries independently.")
    return (f"{ag['shared']} queries are in both sets; the intervals resample them once "
            "for both sets and the rest of each set independently.")


def _silver_vs_human(bundle) -> str:
    """How silver scores compare with people's here, counted from the figures."""
    primary = bundle["setup"]["primary"]
    evs = bundle["evaluations"]
    silver = next((e for e in evs if e.get("silver")), None)
    human = next((e for e in evs if not e.get("silver")), None)
    if silver is None or human is None:
        return "Whether they run higher or lower than people's is not measured here."
    s, h = _scores_of(silver, primary, None), _scores_of(human, primary, None)
    both = [n for n in s if n in h and s[n]["mean"] is not None and h[n]["mean"] is not None]
    higher = sum(s[n]["mean"] > h[n]["mean"] for n in both)
    return (f"Here silver {primary} is higher than {human['label']}'s for {higher} of "
            f"{len(both)} systems.")


def _reading_guide(bundle, number: int) -> Markup:
    alpha = bundle["setup"]["alpha"]
    terms = [
        ("nDCG@10", "graded gain of the top ten, discounted by rank, relative to the best "
                    "possible ordering (1 is perfect)."),
        ("MRR@10", "1 / rank of the first relevant item within the top ten, else 0."),
        ("recall@k", "share of the relevant items found in the top k."),
        ("interval", "95% percentile bootstrap interval over queries (resampled "
                     f"{bundle['setup']['resamples']} times, seed {bundle['setup']['seed']})."),
        ("p (Holm)", "two-sided p-value of the paired test named in each comparison "
                     "section, corrected with Holm's method within its family: the headline "
                     "family is every system against the baseline on the headline metric "
                     "over all queries; other metrics and types are exploratory families "
                     f"of their own; marks use alpha {alpha:g}."),
        ("silver", "judgments made by the tool from the catalogue itself; useful to rank "
                   "systems, but their absolute values are estimates. "
                   + _silver_vs_human(bundle)),
    ]
    return _section("reading", number, "How to read this report",
                    el("dl", {"class_": "terms"},
                       *(join(el("dt", None, k), el("dd", None, v)) for k, v in terms)),
                    el("p", {"class_": "legend"}, fmt.MARK_LEGEND))
