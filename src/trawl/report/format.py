"""Number formatting shared by the terminal summary and the HTML report.

One set of rules so a figure reads the same on screen and in report.html, and the
report test can recompute what a cell must say from the JSON tables.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

MISSING = "–"


def _missing(v: float | None) -> bool:
    return v is None or (isinstance(v, float) and math.isnan(v))


def num(v: float | None, digits: int = 3) -> str:
    """A metric value or difference: fixed decimals; missing values as a dash."""
    return MISSING if _missing(v) else f"{v:.{digits}f}"


def gap(v: float | None, digits: int = 3) -> str:
    """How far apart two scores are, unsigned: a gap that rounds to zero but is not zero
    reads 'less than 0.001', never 'by 0.000' (which reads as a tie and contradicts the
    order it explains)."""
    if _missing(v):
        return MISSING
    step = 10.0 ** -digits
    if 0 < abs(v) < step / 2:
        return f"less than {step:.{digits}f}"
    return f"{abs(v):.{digits}f}"


def signed(v: float | None, digits: int = 3) -> str:
    return MISSING if _missing(v) else f"{v:+.{digits}f}"


def interval(low: float | None, high: float | None, digits: int = 3) -> str:
    if _missing(low) or _missing(high):
        return MISSING
    return f"{low:.{digits}f} to {high:.{digits}f}"


def interval_of(row: Mapping[str, Any], digits: int = 3) -> str:
    """A table row's interval, or why it has none (its ``note``, e.g. "too few queries")."""
    if row.get("note") and (_missing(row.get("low")) or _missing(row.get("high"))):
        return str(row["note"])
    return interval(row.get("low"), row.get("high"), digits)


def pvalue(p: float | None) -> str:
    """p-values to three decimals; below 0.001 as "<0.001" (resampling cannot do better)."""
    if _missing(p):
        return MISSING
    return "<0.001" if p < 0.001 else f"{p:.3f}"


def ms(v: float | None) -> str:
    """Latency in milliseconds: three significant figures, at least two decimals below 1."""
    if _missing(v):
        return MISSING
    return f"{v:.2f}" if v < 10 else f"{v:.1f}" if v < 100 else f"{v:.0f}"


def size(n: int | float | None) -> str:
    """Bytes in decimal units (kB = 1000 B), as disk tools print them."""
    if _missing(n):
        return MISSING
    n = float(n)
    for unit in ("B", "kB", "MB", "GB"):
        if n < 1000 or unit == "GB":
            return f"{n:.0f} {unit}" if unit == "B" else f"{n:.1f} {unit}"
        n /= 1000
    return MISSING  # unreachable: the loop returns at GB


def share(v: float | None) -> str:
    return MISSING if _missing(v) else f"{100 * v:.0f}%"


def settled(firm: Mapping[str, Any] | None, a: str, b: str) -> str | None:
    """One sentence on the pairs each set settles and how many of them the other swaps
    (``agreement.FirmPairs.as_dict()``), or None without an interval."""
    if not firm:
        return None
    out = (f"Of the {firm['pairs']} pairs of systems, {a} settles {firm['settled_a']} (keeps "
           f"their order in at least {100 * firm['threshold']:.0f}% of resamples) and {b} "
           f"swaps {firm['swapped_by_b']} of them; {b} settles {firm['settled_b']} and {a} "
           f"swaps {firm['swapped_by_a']} of them.")
    if firm["swapped_by_b"] or firm["swapped_by_a"]:
        out += " A swap of a settled pair is a disagreement that set's own noise does not explain."
    return out


def held(v: float | None) -> str:
    """' (in N% of resamples)' after a pair's gap, or nothing without an interval."""
    return "" if v is None else f" (in {share(v)} of resamples)"


BETTER, WORSE, UNCLEAR = "▲", "▼", "·"
MARK_LEGEND = (f"{BETTER} better than the baseline, {WORSE} worse, {UNCLEAR} no clear "
               "difference (corrected p at or above alpha)")


def mark(diff: float | None, p_corrected: float | None, alpha: float) -> str:
    """Significance at a glance: direction when the corrected p-value is below alpha."""
    if _missing(diff) or _missing(p_corrected) or p_corrected >= alpha or diff == 0:
        return UNCLEAR
    return BETTER if diff > 0 else WORSE
