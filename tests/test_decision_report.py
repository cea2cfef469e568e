"""The decision in report.html and the terminal: first on the page and in the summary,
chart labels that do not overlap, and (in Chromium) visible in the first screen at 1400 px
with no table scrolling sideways."""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from trawl.decision import Limits, SystemFigures, decide
from trawl.report import text
from trawl.report.charts import CHAR_PX, FONT_PX
from trawl.report.html import render_html

from .test_report_html import sample_bundle

NS = "{http://www.w3.org/2000/svg}"


def bundle_with_decision(silver: bool = True) -> dict:
    """The hand-made report bundle with a decision computed from invented per-query scores
    (demo data only): minilm-int8 within the margin of minilm and faster."""
    rng = np.random.default_rng(2)
    base = rng.uniform(0.3, 0.9, 40)
    scores = [base, base - 0.001 + rng.normal(0, 0.002, 40), base - 0.2 + rng.normal(0, 0.05, 40),
              base - 0.02 + rng.normal(0, 0.05, 40)]
    b = sample_bundle()
    figures = [SystemFigures(r, p95 * 0.7, p95, 4_000_000, 10.0)
               for r, p95 in zip(b["evaluations"][0]["latency"], (12.0, 4.0, 2.0, 15.0))]
    b["decision"] = decide(figures, scores, Limits(headline="ndcg@10"), silver=silver,
                           judgment_set="silver set", resamples=500).as_dict()
    return b


def test_the_decision_comes_first_on_the_page():
    b = bundle_with_decision()
    page = render_html(b)
    assert page.index('id="decision"') < page.index("<nav") < page.index('id="setup"')
    assert b["decision"]["recommended"] == "minilm-int8"
    verdict = re.search(r'<p class="verdict"[^>]*>(.*?)</p>', page).group(1)
    assert verdict.startswith("ship minilm-int8: not worse than minilm by more than 0.01 "
                              "ndcg@10")
    assert "--sample " + str(b["decision"]["review_sample"]) in page
    assert "Provisional." in page  # silver: labelled provisional


def test_the_summary_starts_with_the_decision_in_at_most_six_lines():
    b = bundle_with_decision()
    for ev in b["evaluations"]:  # the hand-made bundle lacks what the summary also prints
        ev["judged_by"] = "silver judgments" if ev["silver"] else "human judgments"
    out = text.summary(b)
    block = out.split("\n\n", 1)[0].splitlines()
    assert block[0].startswith("decision (ndcg@10 on silver set, margin 0.01): ship "
                               "minilm-int8")
    assert len(block) <= 6
    assert block[-1] == ("    trawl review export s.qrels s.queries.tsv -c cat.jsonl -o "
                         f"review.csv --sample {b['decision']['review_sample']}")


def test_the_summary_says_which_settled_pairs_the_other_set_swaps():
    """With nine systems, six of them near copies of one model, the demo's tau was 0.12
    over 15 flipped pairs: near ties. The line under it names what to read instead."""
    b = bundle_with_decision()
    for ev in b["evaluations"]:
        ev["judged_by"] = "silver judgments" if ev["silver"] else "human judgments"
    b["agreement"]["firm_pairs"] = {"threshold": 0.9, "pairs": 36, "settled_a": 21,
                                    "swapped_by_b": 2, "settled_b": 19, "swapped_by_a": 0}
    lines = text.summary(b).splitlines()
    at = next(k for k, line in enumerate(lines) if line.startswith("agreement, silver set"))
    assert lines[at + 1] == (
        "  Of the 36 pairs of systems, silver set settles 21 (keeps their order in at least "
        "90% of resamples) and gold set swaps 2 of them; gold set settles 19 and silver set "
        "swaps 0 of them. A swap of a settled pair is a disagreement that set's own noise "
        "does not explain.")
    b["agreement"]["firm_pairs"] = None  # no bootstrap: no line
    assert not any(line.startswith("  Of the") for line in text.summary(b).splitlines())


def test_per_type_counts_add_up_by_a_stated_tally():
    from trawl.destinations import type_tally

    # by hand: q1 one type, q2 two types, q3 one type, two of five queries untyped
    types = {"q1": ("faq",), "q2": ("faq", "screen"), "q3": ("form",)}
    assert type_tally(types, 5) == ("the per-type rows count 4 queries: 3 of the 5 judged "
                                    "queries have a type, 1 of them counts toward more than "
                                    "one (+1), and 2 toward none")
    assert type_tally({"q1": ("faq",), "q2": ("form",)}, 2) == (
        "the per-type rows count each of the 2 judged queries once")


def _boxes(svg: ET.Element) -> list[tuple[float, float, float, float, str]]:
    """Text boxes (left, top, right, bottom) from the SVG as emitted: width from a fixed
    character width (charts.CHAR_PX at charts.FONT_PX, scaled by the class's font size)."""
    out = []
    for t in svg.iter(f"{NS}text"):
        label = "".join(t.itertext())
        size = 11 if t.get("class") == "tick" else FONT_PX
        w, h = CHAR_PX * size / FONT_PX * len(label), size
        x, y = float(t.get("x")), float(t.get("y"))
        anchor = t.get("text-anchor", "start")
        left = x - {"start": 0, "middle": w / 2, "end": w}[anchor]
        if t.get("transform", "").startswith("rotate(-90"):  # reads upwards, centred on y
            out.append((x - 0.8 * h, y - w / 2, x + 0.2 * h, y + w / 2, label))
        else:
            out.append((left, y - 0.8 * h, left + w, y + 0.2 * h, label))
    return out


def _clashes(boxes, gap: float = 0.0) -> list[tuple[str, str]]:
    """Pairs of text boxes that overlap, or on one line stand less than ``gap`` apart."""
    return [(a[4], b[4]) for i, a in enumerate(boxes) for b in boxes[i + 1:]
            if not (a[2] + gap <= b[0] or b[2] + gap <= a[0] or a[3] <= b[1] or b[3] <= a[1])]


def test_chart_labels_do_not_overlap():
    page = render_html(bundle_with_decision())
    svgs = re.findall(r"<svg.*?</svg>", page, flags=re.S)
    assert len(svgs) == 7
    for svg in svgs:
        boxes = _boxes(ET.fromstring(svg))
        assert len(boxes) > 5
        assert not _clashes(boxes), f"labels overlap in {svg[:80]}"


# The demo's silver-set chart (invented demo data: name, p50 ms, nDCG@10, interval), where
# "minilm-onnx" and "minilm" were drawn 2 px apart on one line: "minilm-onnxminilm".
DEMO_POINTS = [("minilm", 23.25, 0.604, 0.579, 0.629),
               ("minilm-int8", 14.74, 0.59, 0.565, 0.616),
               ("minilm-onnx", 8.87, 0.604, 0.579, 0.629),
               ("minilm-onnx-int8", 5.35, 0.603, 0.577, 0.628),
               ("minilm.vectors-int8", 25.08, 0.604, 0.579, 0.629),
               ("minilm.vectors-binary", 21.33, 0.604, 0.579, 0.629),
               ("static", 0.43, 0.464, 0.436, 0.491), ("bm25", 0.27, 0.512, 0.486, 0.538),
               ("minilm+bm25", 24.97, 0.613, 0.589, 0.636)]


def test_labels_side_by_side_keep_a_character_apart():
    from trawl.report.charts import Point, look, quality_latency

    points = [Point(n, x, y, lo, hi, look(k)) for k, (n, x, y, lo, hi) in enumerate(DEMO_POINTS)]
    boxes = _boxes(ET.fromstring(str(quality_latency(points, "ndcg@10", "c", "t"))))
    assert not _clashes(boxes, gap=CHAR_PX)  # closer, two labels read as one word


def test_the_overlap_check_catches_overlapping_labels():
    """Positive control for the check above: two labels drawn at one spot overlap."""
    svg = ET.fromstring(f'<svg xmlns="{NS[1:-1]}"><text x="10" y="20">minilm</text>'
                        '<text x="30" y="22">bm25</text></svg>')
    assert _clashes(_boxes(svg)) == [("minilm", "bm25")]


@pytest.mark.slow
def test_decision_visible_in_the_first_screen_and_no_table_scrolls(tmp_path):
    from .test_browser import CHROMIUM, DevTools

    if not CHROMIUM.exists():
        pytest.skip(f"Chromium not found at {CHROMIUM}")
    report = tmp_path / "report.html"
    report.write_text(render_html(bundle_with_decision()), encoding="utf-8")
    tools = DevTools(tmp_path / "profile")
    try:
        target = tools.send("Target.createTarget", {"url": "about:blank"})["targetId"]
        session = tools.send("Target.attachToTarget", {"targetId": target,
                                                        "flatten": True})["sessionId"]
        tools.send("Page.enable", session=session)
        tools.send("Emulation.setDeviceMetricsOverride", {
            "width": 1400, "height": 900, "deviceScaleFactor": 1, "mobile": False},
            session=session)
        tools.send("Page.navigate", {"url": report.as_uri()}, session=session)
        tools.wait_for("Page.loadEventFired")
        probe = ("JSON.stringify({verdict: document.querySelector('.verdict')"
                 ".getBoundingClientRect().bottom, width: innerWidth, scrolling: "
                 "[...document.querySelectorAll('.table-wrap, .chart-wrap')]"
                 ".filter(e => e.scrollWidth > e.clientWidth + 1).length})")
        got = tools.send("Runtime.evaluate", {"expression": probe, "returnByValue": True},
                         session=session)["result"]["value"]
        shot = tools.send("Page.captureScreenshot", {"format": "png", "clip": {
            "x": 0, "y": 0, "width": 1400, "height": 900, "scale": 1}}, session=session)
    finally:
        tools.close()
    import json

    got = json.loads(got)
    assert got["width"] == 1400
    assert 0 < got["verdict"] <= 900  # the verdict line is inside the first screen
    assert got["scrolling"] == 0
    assert shot["data"]
