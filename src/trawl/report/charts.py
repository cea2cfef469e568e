"""Hand-built inline SVG charts for the HTML report.

Hand-built rather than matplotlib so the report stays one small file with no embedded
fonts, every label is escaped text a screen reader can reach, and the charts inherit
the page's print styles. Systems are told apart by colour *and* marker shape (the
Okabe-Ito palette, chosen to stay distinct under the common colour-vision deficiencies),
so the charts still read in greyscale print.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from .markup import Markup, el, join

# Okabe & Ito (2008), "Color Universal Design"; yellow last (weak on white paper).
PALETTE = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000",
           "#F0E442")
MARKERS = ("circle", "square", "triangle", "diamond", "down", "cross")

FONT_PX = 12
LABEL_GAP = 14  # vertical room one point label needs
LABEL_PAD = 7  # room between two labels on one line: touching, they read as one word
MIN_LATENCY_MS = 1e-3  # a log axis cannot show 0; faster runs are drawn at 1 microsecond


@dataclass(frozen=True)
class Look:
    """How one system is drawn in every chart of a report."""

    colour: str
    marker: str


def look(index: int) -> Look:
    """The colour and marker of the ``index``-th system (stable across charts)."""
    return Look(PALETTE[index % len(PALETTE)], MARKERS[index % len(MARKERS)])


def marker(shape: str, x: float, y: float, colour: str, r: float = 5.5) -> Markup:
    """One point symbol centred on (x, y)."""
    common = {"fill": colour, "stroke": "#ffffff", "stroke_width": "1.2"}
    if shape == "circle":
        return el("circle", {"cx": _n(x), "cy": _n(y), "r": _n(r), **common})
    if shape == "square":
        return el("rect", {"x": _n(x - r), "y": _n(y - r), "width": _n(2 * r),
                           "height": _n(2 * r), **common})
    if shape == "cross":
        w = r / 2.6
        pts = [(-w, -r), (w, -r), (w, -w), (r, -w), (r, w), (w, w), (w, r), (-w, r),
               (-w, w), (-r, w), (-r, -w), (-w, -w)]
    elif shape == "diamond":
        pts = [(0, -r * 1.25), (r * 1.1, 0), (0, r * 1.25), (-r * 1.1, 0)]
    elif shape == "down":
        pts = [(-r * 1.1, -r * 0.8), (r * 1.1, -r * 0.8), (0, r * 1.2)]
    else:  # triangle
        pts = [(0, -r * 1.2), (r * 1.1, r * 0.8), (-r * 1.1, r * 0.8)]
    return el("polygon", {"points": " ".join(f"{_n(x + dx)},{_n(y + dy)}" for dx, dy in pts),
                          **common})


def _n(v: float) -> str:
    """Coordinates with two decimals: enough for the eye, stable bytes for diffs."""
    return f"{v:.2f}".rstrip("0").rstrip(".") if v != int(v) else str(int(v))


# --- scales ---------------------------------------------------------------------------------

@dataclass(frozen=True)
class Scale:
    """Maps data values in [lo, hi] to pixels in [start, end] (linear or log10)."""

    lo: float
    hi: float
    start: float
    end: float
    log: bool = False

    def __call__(self, v: float) -> float:
        f = math.log10 if self.log else (lambda t: t)
        span = f(self.hi) - f(self.lo)
        frac = 0.5 if span == 0 else (f(v) - f(self.lo)) / span
        return self.start + frac * (self.end - self.start)


def nice_ticks(lo: float, hi: float, count: int = 5) -> list[float]:
    """Round tick values covering [lo, hi] at a 1/2/5 x 10^k step."""
    if hi <= lo:
        return [lo]
    raw = (hi - lo) / max(count, 1)
    mag = 10 ** math.floor(math.log10(raw))
    step = next(s * mag for s in (1, 2, 5, 10) if s * mag >= raw)
    first = math.ceil(lo / step - 1e-9) * step
    out = []
    v = first
    while v <= hi + 1e-9:
        out.append(round(v, 10))
        v += step
    return out


def log_ticks(lo: float, hi: float) -> list[float]:
    """1, 2, 5 x 10^k ticks inside [lo, hi] (for latencies spanning decades)."""
    out = []
    for e in range(math.floor(math.log10(lo)), math.ceil(math.log10(hi)) + 1):
        for m in (1, 2, 5):
            v = m * 10.0 ** e
            if lo <= v <= hi:
                out.append(v)
    return out


def tick_label(v: float) -> str:
    return f"{v + 0.0:g}"  # + 0.0 turns -0.0 into 0


def _frame(width: int, height: int, title: str, desc: str, chart_id: str,
           *body) -> Markup:
    return el("svg", {"xmlns": "http://www.w3.org/2000/svg", "viewBox": f"0 0 {width} {height}",
                      "width": width, "height": height, "role": "img", "class_": "chart",
                      "aria_labelledby": f"{chart_id}-title {chart_id}-desc", "id": chart_id},
              el("title", {"id": f"{chart_id}-title"}, title),
              el("desc", {"id": f"{chart_id}-desc"}, desc),
              *body)


def _x_axis(scale: Scale, ticks: Sequence[float], y: float, top: float, label: str) -> Markup:
    parts = [el("line", {"x1": _n(scale.start), "x2": _n(scale.end), "y1": _n(y), "y2": _n(y),
                         "class_": "axis"})]
    for t in ticks:
        x = scale(t)
        parts.append(el("line", {"x1": _n(x), "x2": _n(x), "y1": _n(top), "y2": _n(y),
                                 "class_": "grid"}))
        parts.append(el("text", {"x": _n(x), "y": _n(y + 16), "text_anchor": "middle",
                                 "class_": "tick"}, tick_label(t)))
    parts.append(el("text", {"x": _n((scale.start + scale.end) / 2), "y": _n(y + 34),
                             "text_anchor": "middle", "class_": "axis-label"}, label))
    return join(parts)


def _y_axis(scale: Scale, ticks: Sequence[float], x: float, right: float,
            label: str) -> Markup:
    parts = [el("line", {"x1": _n(x), "x2": _n(x), "y1": _n(scale.start), "y2": _n(scale.end),
                         "class_": "axis"})]
    for t in ticks:
        y = scale(t)
        parts.append(el("line", {"x1": _n(x), "x2": _n(right), "y1": _n(y), "y2": _n(y),
                                 "class_": "grid"}))
        parts.append(el("text", {"x": _n(x - 6), "y": _n(y + 4), "text_anchor": "end",
                                 "class_": "tick"}, tick_label(t)))
    mid = (scale.start + scale.end) / 2
    parts.append(el("text", {"x": 14, "y": _n(mid), "text_anchor": "middle",
                             "transform": f"rotate(-90 14 {_n(mid)})", "class_": "axis-label"},
                    label))
    return join(parts)


def _span(values: Sequence[float], pad: float, floor: float | None = None,
          ceil: float | None = None) -> tuple[float, float]:
    lo, hi = min(values), max(values)
    width = max(hi - lo, 0.02)
    lo, hi = lo - pad * width, hi + pad * width
    if floor is not None:
        lo = max(lo, floor)
    if ceil is not None:
        hi = min(hi, ceil)
    return lo, hi


def _place_labels(points: Sequence[tuple[float, float, str]], top: float,
                  bottom: float) -> list[float]:
    """Label baselines beside points, nudged up or down so labels never overlap each
    other nor cover another point's marker (when some offset allows it)."""
    order = sorted(range(len(points)), key=lambda i: (points[i][1], points[i][0]))
    taken: list[tuple[float, float, float]] = []  # (left, right, baseline)
    out = [0.0] * len(points)
    offsets = [0.0] + [s * k * LABEL_GAP for k in range(1, 20) for s in (1, -1)]

    def covers_a_marker(i: int, left: float, right: float, base: float) -> bool:
        return any(j != i and left - 6 <= px <= right + 6
                   and base - FONT_PX - 6 <= py <= base + 6
                   for j, (px, py, _) in enumerate(points))

    for i in order:
        x, y, text = points[i]
        left, right = x + 9, x + 9 + 7.0 * len(text)
        first = None  # nearest baseline clear of other labels
        for off in offsets:
            cand = min(max(y + 4 + off, top + FONT_PX), bottom - 2)
            if any(abs(cand - ty) < LABEL_GAP and tl - LABEL_PAD <= right
                   and left <= tr + LABEL_PAD for tl, tr, ty in taken):
                continue
            first = cand if first is None else first
            if not covers_a_marker(i, left, right, cand):
                break
            if abs(off) >= 3 * LABEL_GAP:  # no further from its point than that
                cand = first
                break
        else:
            cand = first if first is not None else cand
        taken.append((left, right, cand))
        out[i] = cand
    return out


DODGE_PX = 9.0  # side step between markers that would otherwise sit on one another
SAME_PLACE_PX = 4.0  # centres closer than this on both axes hide each other


def _dodge(places: Sequence[tuple[float, float]]) -> list[float]:
    """x positions where markers that would cover one another (identical systems, or
    nearly) stand side by side around their shared place, so each stays visible; the
    values themselves are in the figure's description and table."""
    out = [x for x, _ in places]
    groups: list[list[int]] = []
    for i, (x, y) in enumerate(places):
        for g in groups:
            gx, gy = places[g[0]]
            if abs(x - gx) < SAME_PLACE_PX and abs(y - gy) < SAME_PLACE_PX:
                g.append(i)
                break
        else:
            groups.append([i])
    for g in (g for g in groups if len(g) > 1):
        centre = places[g[0]][0]
        for k, i in enumerate(g):
            out[i] = centre + (k - (len(g) - 1) / 2) * DODGE_PX
    return out


# --- charts -------------------------------------------------------------------------------

@dataclass(frozen=True)
class Point:
    """One system in a scatter: value with an interval on y, a position on x."""

    label: str
    x: float
    y: float
    low: float
    high: float
    look: Look


def quality_latency(points: Sequence[Point], metric: str, chart_id: str,
                    title: str) -> Markup:
    """Quality (y, with interval whiskers) against p50 query latency (x, log scale)."""
    width, height = 680, 360
    left, right, top, bottom = 60, width - 150, 18, height - 52
    xs = [max(p.x, MIN_LATENCY_MS) for p in points]
    x_lo, x_hi = min(xs) / 1.8, max(xs) * 1.8
    x = Scale(x_lo, x_hi, left, right, log=True)
    y_lo, y_hi = _span([v for p in points for v in (p.low, p.high, p.y)], 0.15, 0.0, 1.0)
    y = Scale(y_lo, y_hi, bottom, top)
    ticks_x = log_ticks(x_lo, x_hi) or [xs[0]]
    body = [_x_axis(x, ticks_x, bottom, top, "p50 query latency, ms (log scale)"),
            _y_axis(y, nice_ticks(y_lo, y_hi), left, right, metric)]
    px = _dodge([(x(v), y(p.y)) for v, p in zip(xs, points)])
    labels = _place_labels([(cx, y(p.y), p.label) for cx, p in zip(px, points)], top, bottom)
    for p, cx in zip(points, px):
        body.append(el("g", {"class_": "point"},
                       el("line", {"x1": _n(cx), "x2": _n(cx), "y1": _n(y(p.low)),
                                   "y2": _n(y(p.high)), "stroke": p.look.colour,
                                   "class_": "whisker"}),
                       _caps(cx, y(p.low), y(p.high), p.look.colour)))
    # whiskers, then labels over them (with a halo), then the markers over everything
    body.append(_point_labels([(cx + 9, ly, p.label)
                               for p, cx, ly in zip(points, px, labels)]))
    body.append(el("g", {"class_": "markers"},
                   *(marker(p.look.marker, cx, y(p.y), p.look.colour)
                     for p, cx in zip(points, px))))
    desc = "; ".join(f"{p.label}: {p.y:.3f} ({p.low:.3f} to {p.high:.3f}) at {p.x:.3g} ms"
                     for p in points)
    return _frame(width, height, title, desc, chart_id, *body)


def _point_labels(places: Sequence[tuple[float, float, str]]) -> Markup:
    """Every point's label, drawn after all whiskers (and before the markers) with a halo
    of the chart's background: drawn with its own point, a label was crossed by the
    whiskers and covered by the markers of the points drawn after it (the demo's four
    minilm variants at about 20 ms)."""
    return el("g", {"class_": "point-labels"},
              *(el("text", {"x": _n(lx), "y": _n(ly), "class_": "point-label"}, text)
                for lx, ly, text in places))


def _caps(x: float, y1: float, y2: float, colour: str) -> Markup:
    return join(el("line", {"x1": _n(x - 4), "x2": _n(x + 4), "y1": _n(yy), "y2": _n(yy),
                            "stroke": colour, "class_": "whisker"}) for yy in (y1, y2))


@dataclass(frozen=True)
class Bar:
    """One system's value within a group (a destination type), with its interval."""

    label: str
    value: float
    low: float
    high: float
    look: Look


@dataclass(frozen=True)
class BarGroup:
    label: str
    bars: tuple[Bar, ...]


def _legend_places(bars: Sequence[Bar], left: float,
                   limit: float) -> list[tuple[Bar, float, float]]:
    """(bar, x, y) of each legend entry, in rows that end before ``limit``: one row held
    five of the demo's nine systems and cut the fifth name off at the chart's edge."""
    out, lx, ly = [], left, 13.0
    for b in bars:
        span = 14 + CHAR_PX * len(b.label)
        if lx > left and lx + span > limit:
            lx, ly = left, ly + 16
        out.append((b, lx, ly))
        lx += span + 16
    return out


def grouped_bars(groups: Sequence[BarGroup], metric: str, chart_id: str,
                 title: str) -> Markup:
    """Horizontal bars per group with interval whiskers; x runs from 0 to 1."""
    n_bars = max((len(g.bars) for g in groups), default=1)
    bar_h, gap = 11, 14
    group_h = n_bars * bar_h + gap
    width = 680
    left, right = 150, width - 24
    places = _legend_places(groups[0].bars if groups else (), left, width - 8)
    top = 30 + (places[-1][2] - 13 if places else 0)  # below the legend's last row
    bottom = top + len(groups) * group_h
    height = bottom + 44
    x = Scale(0.0, 1.0, left, right)
    body = [_x_axis(x, nice_ticks(0, 1), bottom, top, metric)]
    for b, lx, ly in places:
        body.append(marker(b.look.marker, lx + 5, ly, b.look.colour, r=4.5))
        body.append(el("text", {"x": _n(lx + 14), "y": _n(ly + 4), "class_": "tick"}, b.label))
    for gi, g in enumerate(groups):
        gy = top + gi * group_h + gap / 2
        body.append(el("text", {"x": _n(left - 8), "y": _n(gy + len(g.bars) * bar_h / 2 + 4),
                                "text_anchor": "end", "class_": "group-label"}, g.label))
        for bi, b in enumerate(g.bars):
            by = gy + bi * bar_h
            mid = by + (bar_h - 2) / 2
            body.append(el("g", {"class_": "bar-row"},
                           el("rect", {"x": _n(left), "y": _n(by),
                                       "width": _n(max(x(b.value) - left, 0.5)),
                                       "height": bar_h - 2, "fill": b.look.colour,
                                       "class_": "bar"}),
                           el("line", {"x1": _n(x(b.low)), "x2": _n(x(b.high)), "y1": _n(mid),
                                       "y2": _n(mid), "class_": "whisker-dark"}),
                           marker(b.look.marker, x(b.value), mid, b.look.colour, r=3.6)))
    desc = "; ".join(f"{g.label}: " + ", ".join(f"{b.label} {b.value:.3f}" for b in g.bars)
                     for g in groups)
    return _frame(width, height, title, desc, chart_id, *body)


def agreement_scatter(points: Sequence[Point], x_label: str, y_label: str, chart_id: str,
                      title: str) -> Markup:
    """Each system's score under two judgment sets, with the line of equal scores."""
    size = 360
    left, top, bottom = 60, 18, size - 52
    right = left + (bottom - top)
    values = [v for p in points for v in (p.x, p.y)]
    lo, hi = _span(values, 0.2, 0.0, 1.0)
    x = Scale(lo, hi, left, right)
    y = Scale(lo, hi, bottom, top)
    ticks = nice_ticks(lo, hi, 4)
    body = [_x_axis(x, ticks, bottom, top, x_label), _y_axis(y, ticks, left, right, y_label),
            el("line", {"x1": _n(x(lo)), "y1": _n(y(lo)), "x2": _n(x(hi)), "y2": _n(y(hi)),
                        "class_": "diagonal"})]
    px = _dodge([(x(p.x), y(p.y)) for p in points])
    labels = _place_labels([(cx, y(p.y), p.label) for cx, p in zip(px, points)], top, bottom)
    body.append(_point_labels([(cx + 9, ly, p.label)
                               for p, cx, ly in zip(points, px, labels)]))
    for p, cx in zip(points, px):  # markers over the labels: a label never hides a point
        body.append(el("g", {"class_": "point"},
                       marker(p.look.marker, cx, y(p.y), p.look.colour)))
    desc = "; ".join(f"{p.label}: {p.x:.3f} and {p.y:.3f}" for p in points)
    return _frame(right + 170, size, title, desc, chart_id, *body)


@dataclass(frozen=True)
class Difference:
    """One system's mean difference to the baseline with its interval (None: not given)."""

    label: str
    diff: float
    low: float | None
    high: float | None
    look: Look


CHAR_PX = 7.0  # width of one label character at FONT_PX, for laying out and checking labels


def difference_intervals(rows: Sequence[Difference], metric: str, margin: float,
                         chart_id: str, title: str) -> Markup:
    """One line per system: its difference to the baseline with the interval, the zero
    line, and the band of +-margin (differences the decision treats as no loss)."""
    row_h = 28
    width = 680
    left = 16 + CHAR_PX * max((len(r.label) for r in rows), default=4)
    right, top = width - 24, 12
    bottom = top + row_h * max(len(rows), 1) + 6
    values = [v for r in rows for v in (r.diff, r.low, r.high) if v is not None]
    lo, hi = _span(values + [-margin, margin, 0.0], 0.12)
    x = Scale(lo, hi, left, right)
    body = [el("rect", {"x": _n(x(-margin)), "y": top, "width": _n(x(margin) - x(-margin)),
                        "height": _n(bottom - top), "class_": "margin-band"}),
            _x_axis(x, nice_ticks(lo, hi, 6), bottom, top,
                    f"{metric}: system minus baseline"),
            el("line", {"x1": _n(x(0)), "x2": _n(x(0)), "y1": top, "y2": _n(bottom),
                        "class_": "zero"})]
    for i, r in enumerate(rows):
        y = top + row_h * i + row_h / 2
        parts = [el("text", {"x": _n(left - 10), "y": _n(y + 4), "text_anchor": "end",
                             "class_": "group-label"}, r.label)]
        if r.low is not None and r.high is not None:
            parts += [el("line", {"x1": _n(x(r.low)), "x2": _n(x(r.high)), "y1": _n(y),
                                  "y2": _n(y), "stroke": r.look.colour, "class_": "whisker"}),
                      _caps_h(x(r.low), x(r.high), y, r.look.colour)]
        parts.append(marker(r.look.marker, x(r.diff), y, r.look.colour))
        body.append(el("g", {"class_": "diff-row"}, *parts))
    desc = "; ".join(f"{r.label}: {r.diff:+.3f}" + (
        f" ({r.low:+.3f} to {r.high:+.3f})" if r.low is not None and r.high is not None
        else "") for r in rows) + f"; margin band +-{margin:g}"
    return _frame(width, int(bottom + 44), title, desc, chart_id, *body)


def _caps_h(x1: float, x2: float, y: float, colour: str) -> Markup:
    return join(el("line", {"x1": _n(xx), "x2": _n(xx), "y1": _n(y - 4), "y2": _n(y + 4),
                            "stroke": colour, "class_": "whisker"}) for xx in (x1, x2))
