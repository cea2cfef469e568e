"""Every terminal table and summary, rendered from the data ``--json`` prints.

Each function takes the ``as_dict()`` form of a library result (plus the few
presentation choices the command line makes), so the text and the JSON of a command
cannot disagree. The CLI prints what these return; nothing below ``report`` imports it.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from ..privacy import describe_counts
from ..silver import QUALITY_DOC
from . import format as fmt

MAX_SHOWN = 20  # warnings and disagreements listed before "... and N more"


def text_table(header: Sequence[str], rows: Sequence[Sequence[Any]], align: str | None = None) -> str:
    """Columns padded to their widest cell; ``align`` has 'l' or 'r' per column
    (default: first column left, the rest right)."""
    cells = [[str(h) for h in header]] + [["" if c is None else str(c) for c in r] for r in rows]
    widths = [max(len(r[i]) for r in cells) for i in range(len(header))]
    align = align or "l" + "r" * (len(header) - 1)
    lines = []
    for n, r in enumerate(cells):
        lines.append("  ".join(c.ljust(w) if a == "l" else c.rjust(w)
                               for c, w, a in zip(r, widths, align)).rstrip())
        if n == 0:
            lines.append("  ".join("-" * w for w in widths))
    return "\n".join(lines)


def plain_table(rows: Sequence[Sequence[Any]], header: Sequence[str], align: str | None = None) -> str:
    """A text table with floats at three decimals."""
    return text_table(header, [[f"{c:.3f}" if isinstance(c, float) else str(c) for c in r]
                               for r in rows], align)


def warning_lines(warnings: Sequence[str], max_shown: int = MAX_SHOWN) -> list[str]:
    if not warnings:
        return []
    out = ["", f"{len(warnings)} warning(s):"]
    out += [f"  warning: {w}" for w in warnings[:max_shown]]
    if len(warnings) > max_shown:
        out.append(f"  ... and {len(warnings) - max_shown} more (--json lists all)")
    return out


def _share(x: float | None) -> str:
    return "n/a" if x is None or x != x else f"{x:.3f}"


def _interval(low: float | None, high: float | None) -> str:
    return "n/a" if low is None or low != low else f"[{low:.3f}, {high:.3f}]"


# --- catalogue check --------------------------------------------------------------------------

def check(d: Mapping[str, Any]) -> str:
    items = d["items"]
    out = [f"{d['path']}: {items} items, {len(d['types'])} destination types, "
           f"fingerprint {d['fingerprint']}", ""]
    out.append(plain_table([[t, n, f"{100 * n / items:.1f}%"] for t, n in d["types"].items()],
                           ["type", "items", "share"]))
    out.append("")
    out.append(f"text length ({d['length_unit']}): "
               + "  ".join(f"{k} {v:.0f}" for k, v in d["length_percentiles"].items()))
    return "\n".join(out + warning_lines(d["warnings"]))


# --- scores, comparison, misses ---------------------------------------------------------------

def scores(d: Mapping[str, Any]) -> str:
    """Means overall, per destination type, then warnings (``ScoreReport.as_dict()``)."""
    rows, metrics, runs = d["scores"], d["metrics"], d["runs"]
    has_ci = any(s["low"] is not None or s.get("note") for s in rows)  # intervals asked for

    def cell(s: Mapping[str, Any]) -> str:
        if not has_ci:
            return fmt.num(s["mean"])
        return f"{fmt.num(s['mean'])} ({fmt.interval_of(s)})"

    by_key = {(s["run"], s["metric"], s["type"]): s for s in rows}
    groups = {s["type"]: s["n"] for s in rows}
    out = [f"{d['queries']} queries, {len(runs)} run(s); means over all queries"
           + (" with 95% bootstrap intervals" if has_ci else "")]
    out.append(text_table(["run", *metrics],
                          [[run, *(cell(by_key[(run, m, None)]) for m in metrics)]
                           for run in runs]))
    if len(groups) > 1:
        out += ["", f"per destination type ({d['type_rule']})"]
        body = [[t if i == 0 else "", n if i == 0 else "", run,
                 *(cell(by_key[(run, m, t)]) for m in metrics)]
                for t, n in groups.items() if t is not None for i, run in enumerate(runs)]
        out.append(text_table(["type", "queries", "run", *metrics], body,
                              "lrl" + "r" * len(metrics)))
    return "\n".join(out + warning_lines(d["warnings"]))


def _compact_comparison(d: Mapping[str, Any]) -> list[str]:
    rows, alpha = d["rows"], d["alpha"]
    cell = {(r["type"], r["run"], r["metric"]): r for r in rows}
    body = []
    for g in d["groups"]:
        group = g["type"]
        for i, run in enumerate(d["runs"]):
            line: list[Any] = [("all" if group is None else group) if i == 0 else "",
                               g["n"] if i == 0 else "", run]
            for metric in d["metrics"]:
                r = cell.get((group, run, metric))
                if r is None:  # the baseline itself
                    base = next(c for c in rows if c["type"] == group and c["metric"] == metric)
                    line.append(fmt.num(base["baseline_mean"]))
                else:
                    line.append(f"{fmt.num(r['run_mean'])} {fmt.signed(r['diff'])} "
                                f"{fmt.mark(r['diff'], r['p_corrected'], alpha)}")
            body.append(line)
    return [text_table(["type", "queries", "run", *d["metrics"]], body,
                       "lrl" + "l" * len(d["metrics"])),
            "each cell: mean, then difference from the baseline (run minus baseline); "
            "intervals, both p-values, effect sizes: --long, --json, --csv"]


def _families_line(rows: Sequence[Mapping[str, Any]], headline: str, alpha: float) -> str:
    """What the corrected p-values were corrected over, with the family sizes."""
    from ..scores import count

    head = sum(r.get("family") == "headline" for r in rows)
    line = (f"corrected p: sign-flip randomisation test, Holm-corrected within families; "
            f"headline family: {count(head, 'comparison')} ({headline}, all queries)")
    if head < len(rows):
        line += ("; other metrics and types are exploratory, each corrected only within "
                 "itself")
    return line + f"; alpha {alpha:g}"


def comparison(d: Mapping[str, Any], long: bool = False) -> str:
    """A compact table (mean, difference and a mark per metric) or, with ``long``, one
    line per comparison with interval, p-values and effect size (``Comparison.as_dict()``)."""
    rows, alpha = d["rows"], d["alpha"]
    out = [f"baseline {d['baseline']}; {d['queries']} queries; paired bootstrap "
           f"({d['interval']}, {d['resamples']} resamples, seed {d['seed']}) and sign-flip "
           f"randomisation test"]
    if long:
        body = [["all" if r["type"] is None else r["type"], r["n"], r["run"], r["metric"],
                 fmt.signed(r["diff"]), fmt.interval_of(r),
                 fmt.pvalue(r["p_bootstrap"]), fmt.pvalue(r["p_randomisation"]),
                 fmt.pvalue(r["p_corrected"]), fmt.num(r["effect"], 2),
                 fmt.mark(r["diff"], r["p_corrected"], alpha)] for r in rows]
        out.append(text_table(["type", "queries", "run", "metric", "diff",
                               f"{100 * (1 - alpha):g}% interval", "p boot", "p rand",
                               "p Holm", "effect", "mark"], body, "lrll" + "r" * 6 + "l"))
    else:
        out += _compact_comparison(d)
    out.append(f"marks: {fmt.MARK_LEGEND}")
    out.append(_families_line(rows, d["metrics"][0], alpha))
    if not long and any(r["type"] is not None for r in rows):
        out.append(f"per type: {d['type_rule']}")
    return "\n".join(out + warning_lines(d["warnings"]))


def _worst_lines(worst: Sequence[Mapping[str, Any]]) -> list[str]:
    out = ["", "worst queries per type (wanted item ranked lowest):"]
    current = None
    for w in worst:
        if w["type"] != current:
            current = w["type"]
            out.append(f"  {current}")
        where = f"at rank {w['rank']}" if w["rank"] is not None else "not retrieved"
        asked = f" \"{w['query']}\"" if w["query"] else ""
        wanted, winner = w["wanted"], w["winner"]
        out.append(f"    {w['qid']}{asked}: wanted {wanted['id']} ({wanted['title']!r}) {where}")
        if winner is None:
            out.append("      first instead: nothing retrieved")
        else:
            out.append(f"      first instead: {winner['id']} [{winner['type']}] "
                       f"({winner['title']!r})")
    return out


def misses(d: Mapping[str, Any]) -> str:
    """The per-type table, what came first instead, the worst queries (``MissReport.as_dict()``)."""
    from ..misses import NO_RESULTS, UNKNOWN_ITEM

    k, rows = d["k"], d["rows"]
    hit_k = [f"hit@{k}"] if k > 1 else []
    out = [f"run {d['run']}: misses by destination type of the wanted item (k={k})"]
    out.append(text_table(
        ["type", "queries", "hit@1", *hit_k, f"missed top {k}", "median first rank",
         "never found"],
        [[r["type"], r["queries"], fmt.share(r["hit_at_1"]),
          *([fmt.share(r["hit_at_k"])] if hit_k else []), r["misses"],
          fmt.num(r["median_rank"], 1) if r["median_rank"] is not None else "not found",
          r["not_found"]] for r in rows]))
    winners = sorted({t for r in rows for t in r["lost_to"]},
                     key=lambda t: (t in (NO_RESULTS, UNKNOWN_ITEM), t))
    if winners:
        out += ["", "what came first instead, when the rank-1 item was not relevant "
                    "(share of those queries)"]
        out.append(text_table(["type", "queries", *winners],
                              [[r["type"], r["lost"], *(fmt.share(r["lost_to"][w])
                                                        if w in r["lost_to"] else ""
                                                        for w in winners)] for r in rows]))
    out += ["", d["headline"]]
    if d["worst"]["queries"]:
        out += _worst_lines(d["worst"]["queries"])
    out.append(f"per type: {d['type_rule']}")
    if d.get("scrubbed") is not None:
        out.append(f"scrubbed from query text: {describe_counts(d['scrubbed'])}")
    return "\n".join(out + warning_lines(d["warnings"]))



# --- judgments: agreement, review sheets, synthesis -------------------------------------------

def agreement(d: Mapping[str, Any]) -> str:
    """Two judgment sets' system rankings side by side (``Agreement.as_dict()`` with
    ``qrels_a`` and ``qrels_b``)."""
    tau, rho, boot = d["kendall_tau_b"], d["spearman_rho"], d["bootstrap"]
    out = [f"{d['metric']} under A = {d['qrels_a']} ({d['queries_a']} queries) and "
           f"B = {d['qrels_b']} ({d['queries_b']} queries); {d['shared_queries']} queries "
           "in both"]
    if d["shared_queries"] and d.get("identical_queries") == d["shared_queries"]:
        out.append(f"warning: A and B judge all {d['shared_queries']} shared queries item for "
                   "item alike, so their agreement is certain and says nothing: is B an "
                   "unreviewed copy of A? (a review sheet's rows without a verdict keep "
                   "A's grade)")
    out.append(plain_table([[s["run"], s["score_a"], f"{s['rank_a']:g}", s["score_b"],
                             f"{s['rank_b']:g}"] for s in d["systems"]],
                           ["run", "A", "rank A", "B", "rank B"]))
    out.append("")
    ci = (f"{100 * boot['confidence']:.0f}% bootstrap interval, {boot['resamples']} resamples "
          f"over queries, seed {boot['seed']}") if boot["resamples"] else \
        "no interval (--resamples 0)"
    out.append(plain_table([["Kendall's tau-b", _share(tau["value"]),
                             boot.get("note") or _interval(tau["low"], tau["high"])],
                            ["Spearman's rho", _share(rho["value"]),
                             boot.get("note") or _interval(rho["low"], rho["high"])]],
                           ["agreement", "value", "interval"], "lrr"))
    out.append(f"({ci})")
    if len(d["systems"]) < 4:
        out.append(f"note: with {len(d['systems'])} systems a rank correlation can take only "
                   "a few values; add runs for a finer answer")
    out.append("")
    if not d["flips"]:
        out.append("no pair of systems changes order between A and B")
    else:
        out.append(f"{len(d['flips'])} pair(s) change order (better under A, worse under B):")
        out += [f"  {f['first']} vs {f['second']}: ahead by {fmt.gap(f['diff_a'])} under A"
                f"{fmt.held(f.get('held_a'))}, behind by {fmt.gap(f['diff_b'])} under B"
                f"{fmt.held(f.get('held_b'))}" for f in d["flips"]]
    firm = fmt.settled(d.get("firm_pairs"), "A", "B")
    if firm:
        out.append(firm + (" ('in N% of resamples': how often a set keeps a pair's order "
                           "when its queries are resampled)" if d["flips"] else ""))
    out.append("Scores under silver (machine-made) judgments are estimates; tau and rho say "
               "how far they can be trusted to choose between systems.")
    return "\n".join(out)


def review_export(d: Mapping[str, Any], scrubbed: bool) -> tuple[str, list[str]]:
    """What ``review export`` wrote (``ExportSummary.as_dict()`` with ``provenance``):
    the summary for stdout and the warnings for stderr."""
    out = [f"wrote {s['path']}: {s['silver_rows'] + s['pooled_rows']} rows ({s['silver_rows']} "
           f"silver, {s['pooled_rows']} pooled) for {s['queries']} queries" for s in d["sheets"]]
    if d["overlap_queries"]:
        out.append(f"{d['overlap_queries']} queries are in every sheet, for reviewer agreement")
    out.append("queries per destination type: "
               + ", ".join(f"{t} {n}" for t, n in d["queries_per_type"].items()))
    if d["provenance"]:
        out.append(f"query styles from {d['provenance']}")
    if scrubbed:
        out.append("scrubbed from query text: " + describe_counts(d["scrubbed"]))
    warnings = []
    if d["skipped_unknown_items"]:
        warnings.append(f"warning: {d['skipped_unknown_items']} pooled run result(s) name "
                        "items not in the catalogue; left out")
    return "\n".join(out), warnings


def _precision_table(d: Mapping[str, Any]) -> str:
    groups = [("all", d["silver_precision"])]
    groups += [(f"type {t}", p) for t, p in d["precision_by_type"].items()]
    groups += [(f"style {s}", p) for s, p in d["precision_by_style"].items()]
    return plain_table([[g, p["successes"], p["n"], _share(p["value"]),
                         _interval(p["low"], p["high"])] for g, p in groups],
                       ["group", "kept", "reviewed", "precision", "95% interval"], "lrrrr")


def review_import(d: Mapping[str, Any], judgments: int, queries: int) -> str:
    """What the reviewed sheets say (``ReviewReport.as_dict()`` with ``output``), after
    writing ``judgments`` judgments for ``queries`` queries."""
    out = [f"{s['path']}: {s['rows']} rows, {s['filled']} filled, {s['left']} left"
           for s in d["sheets"]]
    out.append(f"wrote {d['output']}: {judgments} judgments for {queries} queries "
               f"({d['reviewed']} of {d['pairs']} sheet pairs reviewed, {d['left']} left)")
    out += ["", "silver precision: share of reviewed silver positives still relevant after "
                "review, with 95% Wilson interval", _precision_table(d), ""]
    pooled = d["pooled"]
    found = ", ".join(f"{t} {k}" for t, k in pooled["relevant_by_type"].items())
    out.append(f"pooled rows: {pooled['reviewed']} reviewed, {pooled['relevant']} relevant "
               "item(s) the judgments had missed" + (f" ({found})" if found else ""))
    out += [f"reviewers {a['sheet_a']} and {a['sheet_b']}: {a['n']} shared rows, Cohen's "
            f"kappa {_share(a['kappa'])}, grade-weighted (linear) {_share(a['kappa_linear'])}"
            for a in d["agreement"]]
    disagreements = d["disagreements"]
    if disagreements:
        out.append(f"{len(disagreements)} disagreement(s) (grades per sheet -> merged):")
        for x in disagreements[:MAX_SHOWN]:
            grades = ", ".join(f"{p} {g}" for p, g in x["grades"].items())
            out.append(f"  {x['qid']} {x['item_id']}: {x['query']!r} / {x['title']!r}: "
                       f"{grades} -> {x['final']}")
        if len(disagreements) > MAX_SHOWN:
            out.append(f"  ... and {len(disagreements) - MAX_SHOWN} more (--json lists all)")
    return "\n".join(out)


def synth(d: Mapping[str, Any], related_grade: int) -> tuple[str, list[str]]:
    """What ``synth`` made (its summary with ``skipped_styles``, ``scrubbed_from_prompts``
    and ``files``): the summary for stdout and the skipped styles for stderr."""
    skipped = [f"skipped style {style}: {why}" for style, why in d["skipped_styles"].items()]
    out = [f"{d['queries']} queries from {d['items']} items ({d['dropped']} slots dropped, "
           f"{d['merged_drafts']} near-duplicates merged)", ""]
    rows = [[r["style"], r["type"], r["queries"],
             "-" if r["mean_words"] is None else f"{r['mean_words']:.1f}",
             "-" if r["mean_overlap"] is None else f"{r['mean_overlap']:.2f}",
             ", ".join(f"{n} {why}" for why, n in r["dropped"].items()) or "-"]
            for r in d["rows"]]
    out.append(plain_table(rows, ["style", "type", "queries", "words", "overlap", "dropped"],
                           "llrrrl"))
    out.append("")
    out.append(f"overlap = share of query words found in the source item (mean "
               f"{d['mean_overlap']}); profile: {d['profile']['source']}, ceiling "
               f"{d['profile']['ceiling']} on queries of more than "
               f"{d['ceiling_above_words']} content words")
    nb = d["neighbours"]
    if nb["encoders"]:
        out.append(f"{nb['judgments_added']} neighbour judgments at grade {related_grade} "
                   f"(items {' and '.join(nb['encoders'])} all place among a source's "
                   f"{nb['depth']} nearest)")
    out.append("Silver judgments are estimates, not human labels; see "
               f"{QUALITY_DOC} for their measured agreement with people.")
    if d["scrubbed_from_prompts"] is not None:
        out.append("scrubbed from LLM prompts: " + describe_counts(d["scrubbed_from_prompts"]))
    out += [f"wrote {p}" for p in d["files"]]
    return "\n".join(out), skipped


# --- retrieval: index, search, fuse, distill --------------------------------------------------

def index_built(d: Mapping[str, Any]) -> str:
    """One line on an index build (``IndexInfo.as_dict()``)."""
    done = (f"{d['dim']} dims, {d['ann']}, {d.get('store', 'fp32')} vectors): "
            f"{d['embedded']} embedded, {d['reused']} from cache") if d["dim"] \
        else "inverted index)"
    return (f"indexed {d['items']} items with {d['spec']} ({done}, {d['items_per_s']:.1f} "
            f"items/s; {d['bytes']:,} bytes -> {d['path']}"
            + _truncated(d.get("items_over_window"), "items"))


def search(d: Mapping[str, Any], queries: int) -> str:
    """Latency table and what was written (``LatencyReport.as_dict()`` with ``run`` and
    ``latency_file``); ``queries``: how many the run holds."""
    from ..scores import count

    table = plain_table([[d["encoder"], fmt.ms(d["p50_ms"]), fmt.ms(d["p95_ms"]),
                          fmt.ms(d["p99_ms"]), f"{d['batch_queries_per_s']:.0f}",
                          d.get("store", "fp32"), d["index_bytes"], f"{d['bytes_per_item']:.0f}"]],
                        ["encoder", "p50 ms", "p95 ms", "p99 ms", "batch q/s", "vectors",
                         "index bytes", "bytes/item"])
    return (f"{table}\nwrote {d['run']} ({count(queries, 'query', 'queries')}, top {d['k']}) "
            f"and {d['latency_file']} ({count(d['queries_timed'], 'query', 'queries')} timed "
            f"one at a time, {d['warmup']} warm-up excluded; "
            f"{count(d['threads'], 'thread')} on {d['cpu']})"
            + (f"\nwarning: the load average ({max(d['load_before'][0], d['load_after'][0]):.1f})"
               f" was above the {d['cores']} cores while timing; latency is inflated"
               if d.get("busy") else "")
            + _truncated(d.get("queries_over_window"), "queries"))


def _truncated(over: Mapping[str, int] | None, what: str) -> str:
    """A warning line when texts were longer than the encoder's window, else ""."""
    if not over or not over["over"]:
        return ""
    return (f"\nwarning: {over['over']} of {over['total']} {what} are longer than the "
            f"encoder's window of {over['window']} tokens; only their first "
            f"{over['window']} tokens are embedded")


def fused(output: str, name: str, queries: int) -> str:
    return f"wrote {output}: {name}, {queries} queries"


def distilled(path: str, dims: int, seconds: float) -> str:
    return (f"wrote static encoder ({dims} dims) to {path} in {seconds:.1f} s; use it as "
            f"-e static:{path}")


# --- the whole evaluation ---------------------------------------------------------------------

def _evaluation_lines(ev: Mapping[str, Any], bundle: Mapping[str, Any]) -> list[str]:
    primary, alpha = bundle["setup"]["primary"], bundle["setup"]["alpha"]
    sizes = {s["name"]: s.get("index_bytes") for s in bundle["systems"]}
    lines = [f"{ev['label']}: {ev['queries']} queries ({ev['judged_by']})"]
    scores = {s["run"]: s for s in ev["scores"] if s["metric"] == primary and s["type"] is None}
    diffs = {c["run"]: c for c in ev["comparison"]
             if c["metric"] == primary and c["type"] is None}
    rows = []
    for s in bundle["systems"]:
        name = s["name"]
        if name not in scores:
            continue
        sc, lat = scores[name], ev["latency"].get(name, {})
        if name == ev["baseline"]:
            vs = "baseline"
        elif name in diffs:
            c = diffs[name]
            vs = f"{fmt.signed(c['diff'])} {fmt.mark(c['diff'], c['p_corrected'], alpha)}"
        else:
            vs = fmt.MISSING
        rows.append([name, fmt.num(sc["mean"]), fmt.interval_of(sc), vs,
                     fmt.ms(lat.get("p50_ms")), fmt.size(sizes.get(name))])
    table = text_table(["system", primary, "95% interval", f"vs {ev['baseline']}",
                        "p50 ms", "index"], rows, "lrrrrr")
    lines += ["  " + line for line in table.splitlines()]
    if ev.get("miss_headline"):
        lines.append(f"  misses: {ev['miss_headline']}")
    # the warnings results.json and the report carry (judged items missing from the
    # catalogue, queries only in a run, too few queries) are printed too
    lines += ["  " + w for w in warning_lines(ev.get("warnings", ())) if w]
    return lines + [""]


def decision(d: Mapping[str, Any], qrels: str = "QRELS", queries: str = "QUERIES",
             catalogue: str = "CATALOGUE") -> str:
    """The decision block (at most 6 lines): the verdict, its evidence, the frontier, the
    limits, and on silver judgments the caution and the review sample that would confirm
    it (``qrels``, ``queries`` and ``catalogue`` fill in the command)."""
    where = f" on {d['judgment_set']}" if d.get("judgment_set") else ""
    lines = [f"decision ({d['metric']}{where}, margin {d['margin']:g}): {d['headline']}"]
    if d.get("evidence"):
        lines.append(f"  evidence: {d['evidence']}")
    cands = d["candidates"]
    on = [c["name"] for c in cands if c["dominated_by"] is None]
    off = [f"{c['name']} (by {c['dominated_by']})" for c in cands if c["dominated_by"]]
    lines.append(f"  frontier: {', '.join(on)}"
                 + (f"; dominated: {', '.join(off)}" if off else ""))
    asked = [f"p95 <= {d['max_latency_ms']:g} ms" if d.get("max_latency_ms") else "",
             f"index <= {d['max_index_mb']:g} MB" if d.get("max_index_mb") else ""]
    out = [f"{c['name']} ({', '.join(c['excluded_because'])})" for c in cands if not c["fits"]]
    if any(asked):
        lines.append(f"  limits: {', '.join(a for a in asked if a)}"
                     + (f"; excluded: {'; '.join(out)}" if out else "; every system fits"))
    if d.get("caution"):
        lines.append(f"  {d['caution']}:")
        lines.append(f"    trawl review export {qrels} {queries} -c {catalogue} "
                     f"-o review.csv --sample {d['review_sample']}")
    lines += [f"  note: {note}" for note in d.get("notes", ())]
    return "\n".join(lines)


def _review_files(bundle: Mapping[str, Any]) -> dict[str, str]:
    """The deciding set's files, for the review command the decision proposes."""
    d = bundle["decision"]
    ev = next((e for e in bundle["evaluations"]
               if d["judgment_set"] in (e["label"], e["name"])), None)
    if ev is None:
        return {}
    return {"qrels": ev["qrels_file"], "queries": ev["queries_file"],
            "catalogue": bundle["setup"]["catalogue"]["path"]}


def summary(bundle: Mapping[str, Any]) -> str:
    """Everything `trawl eval` prints after its progress bars: the decision first, then a
    quality-vs-latency table per judgment set with significance marks and the miss
    table's headline."""
    lines: list[str] = []
    if bundle.get("decision"):
        lines += [decision(bundle["decision"], **_review_files(bundle)), ""]
    for ev in bundle["evaluations"]:
        lines += _evaluation_lines(ev, bundle)
    ag = bundle.get("agreement")
    if ag:
        lines.append(f"agreement, {ag['a_label']} vs {ag['b_label']} ({ag['metric']}): "
                     f"Kendall's tau {fmt.num(ag['tau']['value'], 2)} "
                     f"({fmt.interval(ag['tau']['low'], ag['tau']['high'], 2)}), "
                     f"Spearman's rho {fmt.num(ag['rho']['value'], 2)}; "
                     f"{len(ag['flips'])} pair(s) of systems change order")
        if firm := fmt.settled(ag.get("firm_pairs"), ag["a_label"], ag["b_label"]):
            lines.append(f"  {firm}")  # tau counts near ties as flips: read settled pairs
    lines.append(f"{fmt.MARK_LEGEND}; alpha {bundle['setup']['alpha']:g}, Holm-corrected over "
                 f"the systems compared with the baseline on {bundle['setup']['primary']}")
    return "\n".join(lines)


def evaluation_written(out_dir: str, report: str, seconds: float) -> str:
    return (f"wrote {out_dir}/ (runs, scores, comparisons, misses as CSV and JSON) and "
            f"{report} in {seconds:.1f} s")
