"""The report's decision section (first on the page) and each judgment set's comparison
with the baseline: an interval plot of the headline family with the margin band, a
systems x metrics matrix, and per-type rows folded away, each followed by its figures.

Every sentence here is made from the figures beside it, so none can contradict them.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from ..decision import DEFAULT_MARGIN
from . import format as fmt
from .charts import Difference, Look, difference_intervals, look
from .html import DataCell, _cell, _figure, _swatch, _table
from .markup import Markup, el


# --- the decision -----------------------------------------------------------------------------

def decision_section(bundle: Mapping[str, Any], looks: Mapping[str, Look]) -> Markup | None:
    """The verdict, its evidence, the caution on silver judgments, and the candidates."""
    d = bundle.get("decision")
    if not d:
        return None
    caution = None
    if d.get("caution"):
        ev = next((e for e in bundle["evaluations"]
                   if d["judgment_set"] in (e["label"], e["name"])), {})
        command = (f"trawl review export {ev.get('qrels_file', 'QRELS')} "
                   f"{ev.get('queries_file', 'QUERIES')} -c "
                   f"{bundle['setup']['catalogue']['path']} -o review.csv "
                   f"--sample {d['review_sample']}")
        caution = el("p", {"class_": "caution", "role": "note"},
                     el("strong", None, "Provisional. "), d["caution"][len("provisional: "):],
                     ": ", el("code", None, command))
    rows = [_candidate_row(c, d, looks) for c in d["candidates"]]
    table = _table(["system", d["metric"], "vs leader", f"{1 - d['alpha']:.0%} interval",
                    f"within {d['margin']:g}", "p95 ms", "index", "build s", "status"],
                   rows, caption=_caption(d), cls="data compact")
    return el("section", {"id": "decision", "class_": "decision",
                          "aria_labelledby": "decision-h"},
              el("h2", {"id": "decision-h"}, "Decision"),
              el("p", {"class_": "verdict", "data_cell": "decision|headline"}, d["headline"]),
              el("p", None, d["evidence"]) if d.get("evidence") else None,
              caution, table,
              *(el("p", {"class_": "legend"}, n) for n in d.get("notes", ())))


def _caption(d: Mapping[str, Any]) -> str:
    limits = [f"p95 latency at most {d['max_latency_ms']:g} ms" if d.get("max_latency_ms")
              else "", f"index at most {d['max_index_mb']:g} MB" if d.get("max_index_mb")
              else ""]
    asked = "; ".join(x for x in limits if x) or "no latency or size limit given"
    return (f"Rests on {d['judgment_set']} ({d['queries']} queries), {d['metric']}, margin "
            f"{d['margin']:g}; {asked}. Not worse: the lower end of the paired bootstrap "
            f"interval ({d['resamples']} resamples, seed {d['seed']}) lies above "
            f"-{d['margin']:g}. Build s: the index's last build, with embeddings already in "
            "the cache counted as free. Status 'dominated': another system is at least as "
            "good on quality, latency, size and build time, and better on one.")


def _candidate_row(c: Mapping[str, Any], d: Mapping[str, Any],
                   looks: Mapping[str, Look]) -> list[Any]:
    pair = next((p for p in d["pairs"] if p["candidate"] == c["name"]), None)
    status = ("recommended" if c["name"] == d.get("recommended") else
              "leader" if c["name"] == d.get("leader") else
              f"excluded: {', '.join(c['excluded_because'])}" if not c["fits"] else
              f"dominated by {c['dominated_by']}" if c["dominated_by"] else "on the frontier")
    if c["name"] == d.get("recommended") and c["name"] == d.get("leader"):
        status = "recommended (leader)"
    return [_swatch(c["name"], looks), _cell(fmt.num(c["quality"]), f"decision|{c['name']}"),
            _cell(fmt.signed(pair["diff"]) if pair else fmt.MISSING),
            _cell(fmt.interval(pair["low"], pair["high"]) if pair else fmt.MISSING),
            _cell(pair["non_inferior"] if pair else fmt.MISSING, cls=""),
            _cell(fmt.ms(c["p95_ms"])), _cell(fmt.size(c["index_bytes"])),
            _cell(fmt.num(c["build_seconds"], 1)), _cell(status, cls="")]


# --- comparison with the baseline ---------------------------------------------------------------

def comparison_block(bundle: Mapping[str, Any], ev: Mapping[str, Any], slug: str,
                     looks: Mapping[str, Look]) -> Markup:
    """The headline family as an interval plot (and its table), every metric as a matrix,
    and per-type rows under a fold."""
    rows = ev["comparison"]
    head = el("h3", None, "Compared with the baseline")
    if not rows:
        return el("div", {"class_": "block", "id": f"compare-{slug}"}, head,
                  el("p", None, "Only one system: nothing to compare."))
    primary, alpha = bundle["setup"]["primary"], bundle["setup"]["alpha"]
    margin = (bundle.get("decision") or {}).get("margin", DEFAULT_MARGIN)
    return el("div", {"class_": "block", "id": f"compare-{slug}"}, head,
              _headline_figure(ev, slug, primary, alpha, margin, looks),
              _matrix(bundle, ev, alpha),
              _exploratory(bundle, ev, alpha),
              el("p", {"class_": "legend"}, fmt.MARK_LEGEND, f"; alpha {alpha:g}; p Holm: "
                 f"the {ev.get('corrected') or 'randomisation'} p-value with Holm's "
                 "correction within the family named in each caption."))


def _headline_figure(ev, slug: str, primary: str, alpha: float, margin: float,
                     looks: Mapping[str, Look]) -> Markup:
    rows = [c for c in ev["comparison"] if c["metric"] == primary and c["type"] is None]
    diffs = [Difference(c["run"], c["diff"], c["low"], c["high"], looks.get(c["run"], look(0)))
             for c in rows if c["diff"] is not None]
    estimate = " (silver: estimates)" if ev.get("silver") else ""
    title = f"{primary}, each system minus {ev['baseline']}, {ev['label']}{estimate}"
    chart = difference_intervals(diffs, primary, margin, f"chart-diff-{slug}", title)
    table = _table(["system", "difference", f"{1 - alpha:.0%} interval", "p Holm", "mark"],
                   [_row(ev, c, alpha) for c in rows],
                   caption=f"Figures behind the chart. p Holm: corrected over these "
                           f"{len(rows)} comparisons (the headline family) only; the intervals "
                           "are per comparison, not adjusted, so one may exclude 0 while the "
                           "corrected p stays above alpha.", cls="data compact")
    return _figure(chart, f"Dot: mean difference over {rows[0]['n']} queries; line: "
                          f"{1 - alpha:.0%} paired bootstrap interval; shaded band: "
                          f"within the margin of {margin:g}, the loss the decision accepts. "
                          "Right of zero is better than the baseline.", table)


def _row(ev, c: Mapping[str, Any], alpha: float) -> list[Any]:
    key = f"{ev['name']}|{c['run']}|{c['metric']}|{c['type'] or 'all'}"
    mark = fmt.mark(c["diff"], c["p_corrected"], alpha)
    return [c["run"], _cell(fmt.signed(c["diff"]), key + "|diff"),
            _cell(fmt.interval(c["low"], c["high"])),
            _cell(fmt.pvalue(c["p_corrected"]), key + "|p"), _mark(mark)]


def _mark(mark: str) -> DataCell:
    cls = {fmt.BETTER: "up", fmt.WORSE: "down"}.get(mark, "flat")
    return _cell(mark, cls=f"mark {cls}")


def _matrix(bundle, ev, alpha: float) -> Markup:
    metrics = bundle["setup"]["metrics"]
    cells = {(c["run"], c["metric"]): c for c in ev["comparison"] if c["type"] is None}
    runs = list(dict.fromkeys(c["run"] for c in ev["comparison"]))
    body = []
    for run in runs:
        line: list[Any] = [run]
        for m in metrics:
            c = cells.get((run, m))
            line += ([_cell(fmt.MISSING), _cell("")] if c is None else
                     [_cell(fmt.signed(c["diff"]), f"{ev['name']}|{run}|{m}|all|diff"),
                      _mark(fmt.mark(c["diff"], c["p_corrected"], alpha))])
        body.append(line)
    header = ["system"] + [h for m in metrics for h in (m, "")]
    return _table(header, body, cls="data compact",
                  numeric=[False] + [True, False] * len(metrics),
                  caption=f"Every metric, all queries: difference from {ev['baseline']} and "
                          "mark. Exploratory beyond the headline metric: each metric's "
                          "comparisons are Holm-corrected only among themselves, not across "
                          "metrics.")


def _exploratory(bundle, ev, alpha: float) -> Markup | None:
    primary = bundle["setup"]["primary"]
    rows = [c for c in ev["comparison"] if (c["metric"], c["type"]) != (primary, None)]
    if not rows:
        return None
    body = [[c["type"] or "all", c["run"], c["metric"], _cell(str(c["n"])),
             *_row(ev, c, alpha)[1:]] for c in rows]
    typed = any(c["type"] is not None for c in rows)
    table = _table(["type", "system", "metric", "queries", "difference",
                    f"{1 - alpha:.0%} interval", "p Holm", "mark"], body, cls="data compact",
                   numeric=[False, False, False, True, True, True, True, False],
                   caption="Exploratory: each (metric, type) is its own Holm family, not "
                           "corrected across metrics and types, so read these as leads, not "
                           "findings. " + (ev.get("type_rule", "") if typed else ""))
    what = "other metrics and destination types" if typed else "other metrics"
    return el("details", None, el("summary", None, f"Every comparison on {what} ({len(rows)} "
                                                    "rows, exploratory)"), table)
