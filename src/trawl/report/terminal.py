"""The short terminal summary of an evaluation, rendered from the results bundle.

A quality-vs-latency table per judgment set with significance marks, then the miss
table's headline: enough to decide whether to open report.html.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from ..tables import text_table
from . import format as fmt


def silver_note(ev: Mapping[str, Any], agreement: Mapping[str, Any] | None) -> str:
    if not ev.get("silver"):
        return "human judgments"
    if agreement and ev["name"] in (agreement["a"], agreement["b"]):
        tau = agreement["tau"]
        other = agreement["b_label"] if ev["name"] == agreement["a"] else agreement["a_label"]
        return (f"silver judgments: figures are estimates; system rankings against "
                f"{other}: Kendall's tau {fmt.num(tau['value'], 2)} "
                f"({fmt.interval(tau['low'], tau['high'], 2)})")
    return ("silver judgments: figures are estimates; agreement with human judgments "
            "not measured")


def summary(bundle: Mapping[str, Any]) -> str:
    """Everything `trawl eval` prints after its progress bars."""
    primary = bundle["setup"]["primary"]
    alpha = bundle["setup"]["alpha"]
    sizes = {s["name"]: s.get("index_bytes") for s in bundle["systems"]}
    lines: list[str] = []
    for ev in bundle["evaluations"]:
        lines.append(f"{ev['label']}: {ev['queries']} queries ({silver_note(ev, bundle.get('agreement'))})")
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
            rows.append([name, fmt.num(sc["mean"]), fmt.interval(sc["low"], sc["high"]), vs,
                         fmt.ms(lat.get("p50_ms")), fmt.size(sizes.get(name))])
        table = text_table(["system", primary, "95% interval", f"vs {ev['baseline']}",
                            "p50 ms", "index"], rows, "lrrrrr")
        lines += ["  " + line for line in table.splitlines()]
        if ev.get("miss_headline"):
            lines.append(f"  misses: {ev['miss_headline']}")
        lines.append("")
    ag = bundle.get("agreement")
    if ag:
        lines.append(f"agreement, {ag['a_label']} vs {ag['b_label']} ({ag['metric']}): "
                     f"Kendall's tau {fmt.num(ag['tau']['value'], 2)} "
                     f"({fmt.interval(ag['tau']['low'], ag['tau']['high'], 2)}), "
                     f"Spearman's rho {fmt.num(ag['rho']['value'], 2)}; "
                     f"{len(ag['flips'])} pair(s) of systems change order")
    lines.append(f"{fmt.MARK_LEGEND}; alpha {alpha:g}, Holm-corrected")
    return "\n".join(lines)
